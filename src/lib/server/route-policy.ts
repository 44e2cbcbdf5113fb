/**
 * Who may do what, for every route: one table that `hooks.server.ts` enforces on every request
 * (page loads, client-side data requests, form actions, API calls). A route missing from this table is
 * refused — new routes must be added here, and the route × role matrix test walks the file system to
 * make sure each one is.
 */
import { hasRole, type Role } from './roles.ts';
import type { TokenScope } from './api-tokens.ts';

export type Access = 'public' | Role;

export interface RoutePolicy {
	GET?: Access;
	POST?: Access;
	PUT?: Access;
	PATCH?: Access;
	DELETE?: Access;
	/** Form actions of a page, by name (`default` for the unnamed one). */
	actions?: Record<string, Access>;
	/**
	 * API routes that also accept a *service* token (a tool host's) of this scope, or of any of these.
	 * Personal tokens need no entry: they act as their owner on every API route that owner's role may
	 * use, within their own scopes (see decide).
	 */
	token?: TokenScope | TokenScope[];
}

export const ROUTE_POLICY: Record<string, RoutePolicy> = {
	// Alarm queue, baselines, maintenance, fleet matching, admin policy and cause codes.
	'/alarms': { GET: 'viewer', actions: { acknowledge: 'engineer', close: 'engineer' } },
	'/alarms/[id]': { GET: 'viewer', actions: { acknowledge: 'engineer', close: 'engineer' } },
	'/baselines': { GET: 'viewer' },
	'/baselines/[chamber]/[step]': { GET: 'viewer', actions: { choose: 'viewer', draft: 'engineer', approve: 'engineer', discard: 'engineer', rescore: 'engineer' } },
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
	// Fleet matching: read the latest run (read tokens too); run it now (an engineer).
	'/api/matching': { GET: 'viewer', POST: 'engineer', token: 'read' },
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
	'/unsubscribe': { GET: 'public', actions: { default: 'public' } },
	// Fab structure (admins edit it; every signed-in role and any token reads the chamber list), one's
	// own API tokens, and the API's OpenAPI document (public: it holds no data, and automation reads it
	// before it has a token).
	'/admin/structure': {
		GET: 'admin',
		actions: { area: 'admin', tool: 'admin', chamber: 'admin', rename: 'admin', move: 'admin', retire: 'admin', restore: 'admin' }
	},
	'/api/chambers': { GET: 'viewer', POST: 'admin', token: ['read', 'ingest'] },
	'/account/tokens': { GET: 'viewer', actions: { create: 'viewer', revoke: 'viewer' } },
	'/api/openapi.json': { GET: 'public' },
	// Qualification campaigns: everyone reads them; engineers start and approve (four-eyes in the code).
	'/qualifications': { GET: 'viewer', actions: { create: 'engineer' } },
	'/qualifications/[id]': { GET: 'viewer', actions: { approve: 'engineer' } },
	'/api/qualifications': { GET: 'viewer', POST: 'engineer', token: 'read' },
	'/api/qualifications/[id]': { GET: 'viewer', token: 'read' },
	'/api/qualifications/[id]/approve': { POST: 'engineer' }
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
	token: { scopes: readonly TokenScope[]; owner: { role: Role } | null } | null = null
): Decision {
	const policy = ROUTE_POLICY[routeId];
	if (!policy) return { allow: false, status: 403, reason: `route ${routeId} has no access policy` };
	let access: Access | undefined;
	if (isPage && method === 'POST') access = policy.actions?.[actionName(url)];
	else if (method === 'HEAD') access = policy.GET;
	else access = policy[method as 'GET' | 'POST' | 'PUT' | 'PATCH' | 'DELETE'];
	if (access === undefined) return { allow: false, status: 405, reason: `${method} is not allowed here` };
	if (access === 'public') return { allow: true };
	if (token?.owner) {
		// A personal token acts as its owner (their role is checked below) within its scopes.
		const needed = tokenScopeFor(policy, method);
		if (!token.scopes.includes(needed))
			return { allow: false, status: 403, reason: `This needs a token with the "${needed}" scope; this one has ${token.scopes.join(', ')}.` };
		role = token.owner.role;
	} else if (token) {
		// A service token acts as nobody: it may read the routes that name one of its scopes and send
		// files where `ingest` is named, and change nothing else. An ingest token therefore can post wafer
		// summaries but never acknowledge anything; a read token only reads.
		const accepts = acceptedScopes(policy);
		const reading = method === 'GET' || method === 'HEAD';
		const ok = reading ? token.scopes.some((s) => accepts.includes(s)) : tokenScopeFor(policy, method) === 'ingest' && token.scopes.includes('ingest');
		if (ok) return { allow: true };
		if (!reading && token.scopes.length === 1 && token.scopes[0] === 'read') return { allow: false, status: 403, reason: 'A read token can only read.' };
		return { allow: false, status: 403, reason: `An API token of scope "${token.scopes.join(', ')}" cannot use this route.` };
	}
	if (!role) return { allow: false, status: 401, reason: 'Sign in first.' };
	if (!hasRole(role, access))
		return { allow: false, status: 403, reason: `This needs the ${access} role; you are signed in as ${role}.` };
	return { allow: true };
}

/**
 * The scope a personal token needs for a request: reading is `read`; a POST to a route that takes
 * ingest tokens only (sending files) is `ingest`; any other change is `write`.
 */
export function tokenScopeFor(policy: RoutePolicy, method: string): TokenScope {
	if (method === 'GET' || method === 'HEAD') return 'read';
	const accepts = acceptedScopes(policy);
	return accepts.includes('ingest') && method === 'POST' && !accepts.includes('read') ? 'ingest' : 'write';
}

function acceptedScopes(policy: RoutePolicy): TokenScope[] {
	return policy.token === undefined ? [] : Array.isArray(policy.token) ? policy.token : [policy.token];
}
