import type { Role } from '$lib/server/roles';

export interface NavItem {
	href: string;
	label: string;
	/** The lowest role that sees the item. */
	role: Role;
	/** Route ids that count as being in this section. */
	match: string[];
	/** Shown to this role alone (a page that higher roles reach from another section). */
	only?: Role;
}

// Lockstep's own section names.
export const NAV: NavItem[] = [
	{ href: '/', label: 'Fleet', role: 'viewer', match: ['/', '/chambers', '/wafers'] },
	{ href: '/alarms', label: 'Alarms', role: 'viewer', match: ['/alarms'] },
	{ href: '/fleet', label: 'Matching', role: 'viewer', match: ['/fleet'] },
	{ href: '/baselines', label: 'Baselines', role: 'viewer', match: ['/baselines'] },
	{ href: '/qualifications', label: 'Qualify', role: 'viewer', match: ['/qualifications'] },
	{ href: '/maintenance', label: 'Maintenance', role: 'viewer', match: ['/maintenance'] },
	{ href: '/uploads', label: 'Uploads', role: 'engineer', match: ['/uploads'] },
	// Viewers may read feature-set changes but have no uploads page to reach them from.
	{ href: '/uploads/feature-sets', label: 'Feature sets', role: 'viewer', only: 'viewer', match: ['/uploads/feature-sets'] },
	{ href: '/admin/policy', label: 'Policy', role: 'admin', match: ['/admin/policy', '/admin/cause-codes', '/admin/structure'] },
	{ href: '/admin/users', label: 'People', role: 'admin', match: ['/admin/users'] },
	{ href: '/admin/tokens', label: 'Tokens', role: 'admin', match: ['/admin/tokens'] },
	// Everyone's own API tokens; admins reach theirs from the service-token page.
	{ href: '/account/tokens', label: 'Tokens', role: 'viewer', only: 'viewer', match: ['/account/tokens'] },
	{ href: '/account/tokens', label: 'Tokens', role: 'engineer', only: 'engineer', match: ['/account/tokens'] },
	{ href: '/account/mail', label: 'Mail', role: 'viewer', match: ['/account/mail'] },
	{ href: '/admin/mail', label: 'Mailbox', role: 'admin', match: ['/admin/mail'] }
];
