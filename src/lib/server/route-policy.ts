/**
 * Who may do what, for every route: one table that `hooks.server.ts` enforces on every request
 * (page loads, client-side data requests, form actions, API calls). A route missing from this table is
 * refused — new routes must be added here, and the route × role matrix test walks the file system to
 * make sure each one is.
 */
import type { Role } from './roles.ts';

export type Access = 'public' | Role;

export interface RoutePolicy {
	GET?: Access;
	POST?: Access;
	PUT?: Access;
	PATCH?: Access;
	DELETE?: Access;
	/** Form actions of a page, by name (`default` for the unnamed one). */
	actions?: Record<string, Access>;
	/** API routes that also accept a bearer API token of this scope. */
	token?: 'ingest' | 'read';
}

export const ROUTE_POLICY: Record<string, RoutePolicy> = {
	// Alarm queue, baselines, maintenance, fleet matching, admin policy and cause codes.
	'/alarms': { GET: 'viewer', actions: { acknowledge: 'engineer', close: 'engineer' } },
	'/alarms/[id]': { GET: 'viewer', actions: { acknowledge: 'engineer', close: 'engineer' } },
	'/baselines': { GET: 'viewer' },
	'/baselines/[chamber]/[step]': { GET: 'viewer', actions: { draft: 'engineer', approve: 'engineer', discard: 'engineer', rescore: 'engineer' } },
	'/maintenance': { GET: 'viewer', actions: { log: 'engineer' } },
	'/admin/policy': { GET: 'admin', actions: { alarm: 'admin', baseline: 'admin', ingest: 'admin' } },
	'/admin/cause-codes': { GET: 'admin', actions: { add: 'admin', rename: 'admin', retire: 'admin', restore: 'admin' } },
	'/api/tasks/[id]': { GET: 'viewer' },
	'/fleet': { GET: 'viewer', actions: { run: 'engineer', model: 'engineer' } },
	'/': { GET: 'viewer' },
	// Fleet heatmap, chamber and wafer-step screens and their JSON APIs.
	'/api/heatmap': { GET: 'viewer', token: 'read' },
	'/chambers/[code]': { GET: 'viewer' },
	'/api/chambers/[code]/series': { GET: 'viewer', token: 'read' },
	'/api/chambers/[code]/wafers': { GET: 'viewer', token: 'read' },
	'/wafers/[id]': { GET: 'viewer', actions: { acknowledge: 'engineer' } },
	'/api/wafers/[id]': { GET: 'viewer', token: 'read' },
	'/sign-in': { GET: 'public', actions: { default: 'public' } },
	'/sign-out': { GET: 'public', actions: { default: 'viewer' } },
	'/account': { GET: 'viewer', actions: { password: 'viewer' } },
	'/admin/users': {
		GET: 'admin',
		actions: { create: 'admin', reset: 'admin', role: 'admin', disable: 'admin', enable: 'admin' }
	},
	'/api/health': { GET: 'public' },
	'/api/me': { GET: 'viewer' },
	'/api/fleet': { GET: 'viewer', token: 'read' },
	'/uploads': { GET: 'engineer' },
	// Feature-set changes: everyone sees them (a refused step matters to all); engineers decide.
	'/uploads/feature-sets': { GET: 'viewer', actions: { accept: 'engineer', dismiss: 'engineer' } },
	'/admin/tokens': { GET: 'admin', actions: { create: 'admin', revoke: 'admin' } },
	'/api/ingest': { POST: 'engineer', token: 'ingest' },
	// Alarms for automation: a read token may list them; acknowledging is recorded as a person, so it
	// needs an engineer's session.
	'/api/alarms': { GET: 'viewer', token: 'read' },
	'/api/alarms/acknowledge': { POST: 'engineer' },
	'/api/uploads': { GET: 'engineer' },
	// Mail: one's own settings (an admin may open anyone's; checked in the route), the admin outbox and
	// mailbox, and the public unsubscribe page, where the signed token is the credential.
	'/account/mail': { GET: 'viewer', actions: { save: 'viewer' } },
	'/admin/mail': { GET: 'admin', actions: { send: 'admin', requeue: 'admin', policy: 'admin' } },
	'/unsubscribe': { GET: 'public', actions: { default: 'public' } }
};

/** The form action named by a POST to a page: `?/name`, or `default`. */
export function actionName(url: URL): string {
	for (const key of url.searchParams.keys()) {
		if (key.startsWith('/')) return key.slice(1);
	}
	return 'default';
}

export type Decision = { allow: true } | { allow: false; status: 401 | 403 | 405; reason: string };

/**
 * Decide a request. `routeId` is SvelteKit's route id, `role` the signed-in user's (or null),
 * `isPage` whether the route is a page (so POST means a form action), `token` the API token that
 * authenticated the request instead of a session (hooks.server.ts), if any.
 */
export function decide(
	routeId: string,
	method: string,
	url: URL,
	role: Role | null,
	isPage: boolean,
	token: { scope: 'ingest' | 'read' } | null = null
): Decision {
	const policy = ROUTE_POLICY[routeId];
	if (!policy) return { allow: false, status: 403, reason: `route ${routeId} has no access policy` };
	let access: Access | undefined;
	if (isPage && method === 'POST') access = policy.actions?.[actionName(url)];
	else if (method === 'HEAD') access = policy.GET;
	else access = policy[method as 'GET' | 'POST' | 'PUT' | 'PATCH' | 'DELETE'];
	if (access === undefined) return { allow: false, status: 405, reason: `${method} is not allowed here` };
	if (access === 'public') return { allow: true };
	// A token may use only the routes that name its scope; a read token only reads. An ingest token
	// therefore can post wafer summaries but never read or acknowledge anything.
	if (token) {
		if (policy.token !== token.scope)
			return { allow: false, status: 403, reason: `An API token of scope "${token.scope}" cannot use this route.` };
		if (token.scope === 'read' && method !== 'GET' && method !== 'HEAD')
			return { allow: false, status: 403, reason: 'A read token can only read.' };
		return { allow: true };
	}
	if (!role) return { allow: false, status: 401, reason: 'Sign in first.' };
	const order = ['viewer', 'engineer', 'admin'];
	if (order.indexOf(role) < order.indexOf(access))
		return { allow: false, status: 403, reason: `This needs the ${access} role; you are signed in as ${role}.` };
	return { allow: true };
}
