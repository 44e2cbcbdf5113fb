import type { Role } from '$lib/server/roles';

export interface NavItem {
	href: string;
	label: string;
	/** The lowest role that sees the item. */
	role: Role;
	/** Route ids that count as being in this section. */
	match: string[];
}

// Lockstep's own section names.
export const NAV: NavItem[] = [
	{ href: '/', label: 'Fleet', role: 'viewer', match: ['/'] },
	{ href: '/uploads', label: 'Uploads', role: 'engineer', match: ['/uploads'] },
	{ href: '/admin/users', label: 'People', role: 'admin', match: ['/admin/users'] },
	{ href: '/admin/tokens', label: 'Tokens', role: 'admin', match: ['/admin/tokens'] }
];
