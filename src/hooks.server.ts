import { error, type Handle, type HandleServerError, type ServerInit } from '@sveltejs/kit';
import { reportUnexpected } from '$lib/server/unexpected-error';
import { sequence } from '@sveltejs/kit/hooks';
import { luciaFor } from '$lib/server/auth';
import { decide } from '$lib/server/route-policy';
import { securityHeaders } from '$lib/server/security-headers';
import { closeDb, db } from '$lib/server/db';
import { recoverInterruptedIngests, sweepSpool } from '$lib/server/ingest';
import { noteLocalWrite } from '$lib/server/answer-cache';
import { bearerToken, verifyApiToken } from '$lib/server/api-tokens';
import { THEME_COOKIE, themeFromCookie, withHtmlTheme } from '$lib/components/ui/theme';

// Knex's pool keeps the event loop alive: close it when adapter-node shuts down.
process.on('sveltekit:shutdown', () => {
	void closeDb();
});

/**
 * At start: finish what a killed server left of uploads and API ingests (an unflipped file is undone,
 * a flipped one's pending scoring done; see ingest/pipeline.ts) and sweep orphan spool files.
 */
export const init: ServerInit = async () => {
	try {
		const r = await recoverInterruptedIngests(db(), ['upload', 'api']);
		if (r.undone || r.scored) console.log(`ingest: recovered after an interruption: ${r.undone} unpublished upload(s) undone, ${r.scored} upload(s) scored`);
		const swept = sweepSpool();
		if (swept) console.log(`ingest: removed ${swept} orphan spool file(s) of stopped processes`);
	} catch (e) {
		// no database yet (before the first migration): nothing to recover
		console.warn('ingest recovery skipped:', e instanceof Error ? e.message : e);
	}
};

/** Resolve the session cookie to `locals.user`, refreshing or clearing the cookie as Lucia says. */
const session: Handle = async ({ event, resolve }) => {
	const lucia = luciaFor(event.url);
	event.locals.apiToken = null;
	const sessionId = event.cookies.get(lucia.sessionCookieName) ?? null;
	if (!sessionId) {
		event.locals.user = null;
		event.locals.session = null;
		return resolve(event);
	}
	const { session, user } = await lucia.validateSession(sessionId);
	if (session?.fresh) {
		const c = lucia.createSessionCookie(session.id);
		event.cookies.set(c.name, c.value, { path: '.', ...c.attributes });
	}
	if (!session) {
		const c = lucia.createBlankSessionCookie();
		event.cookies.set(c.name, c.value, { path: '.', ...c.attributes });
	}
	event.locals.session = session;
	event.locals.user = user
		? {
				id: user.id,
				username: user.username,
				displayName: user.displayName,
				role: user.role,
				timeZone: user.timeZone,
				email: user.email
			}
		: null;
	return resolve(event);
};

/**
 * Resolve `Authorization: Bearer <token>` on API routes to `locals.apiToken`. A request carrying a
 * token acts as that token only (any session cookie sent along is ignored): a service token as nobody,
 * a personal token as its owner (`locals.user`, so what it does is recorded under their name). An
 * unknown or revoked token is refused here, before the route policy.
 */
const bearer: Handle = async ({ event, resolve }) => {
	const raw = bearerToken(event.request.headers.get('authorization'));
	if (raw === null || !event.route.id?.startsWith('/api/')) return resolve(event);
	const token = raw ? await verifyApiToken(raw) : null;
	if (!token)
		return new Response(JSON.stringify({ error: 'The API token is unknown or revoked.' }), {
			status: 401,
			headers: { 'content-type': 'application/json', 'www-authenticate': 'Bearer' }
		});
	event.locals.apiToken = token;
	event.locals.user = token.owner;
	event.locals.session = null;
	return resolve(event);
};

/**
 * `POST /page?/default`: SvelteKit reads `?/default` as a named action called "default" and answers a
 * page with only a default action with a 500. It is the client's mistake: 400 with the reason.
 */
const namedDefault: Handle = async ({ event, resolve }) => {
	if (event.request.method === 'POST' && event.url.searchParams.has('/default'))
		return new Response(JSON.stringify({ error: '`?/default` names no action: post the form to the page itself (no `?/…`), or to `?/<action>` for a named one.' }), {
			status: 400,
			headers: { 'content-type': 'application/json' }
		});
	return resolve(event);
};

/** Enforce ROUTE_POLICY on every request that matched a route. */
const authorize: Handle = async ({ event, resolve }) => {
	const routeId = event.route.id;
	if (routeId === null) return resolve(event); // no such route: SvelteKit answers 404
	const isApi = routeId.startsWith('/api/');
	const d = decide(routeId, event.request.method, event.url, event.locals.user?.role ?? null, !isApi, event.locals.apiToken);
	if (d.allow) return resolve(event);
	if (isApi) {
		return new Response(JSON.stringify({ error: d.reason }), {
			status: d.status,
			headers: { 'content-type': 'application/json' }
		});
	}
	if (d.status === 401 && event.request.method === 'GET') {
		const next = event.url.pathname + event.url.search;
		// Returned rather than thrown (redirect()), so that the `headers` handle adds the security headers.
		return new Response(null, { status: 303, headers: { location: `/sign-in?next=${encodeURIComponent(next)}` } });
	}
	error(d.status, d.reason);
};

const headers: Handle = async ({ event, resolve }) => {
	// The theme chosen with the toggle (cookie) is rendered by the server, so there is no flash and no
	// inline script for the CSP to allow.
	const theme = themeFromCookie(event.cookies.get(THEME_COOKIE));
	const response = await resolve(event, { transformPageChunk: ({ html }) => withHtmlTheme(html, theme) });
	for (const [k, v] of Object.entries(securityHeaders())) {
		if (!response.headers.has(k)) response.headers.set(k, v);
	}
	return response;
};

/**
 * A change made through this server (upload, acknowledgement, approval) shows on the next poll: kept
 * API answers are dropped after every request that may have written (other processes' commits are
 * seen by the data version itself; see answer-cache.ts). Also noted when the request failed midway.
 */
const freshness: Handle = async ({ event, resolve }) => {
	if (event.request.method === 'GET' || event.request.method === 'HEAD') return resolve(event);
	try {
		return await resolve(event);
	} finally {
		noteLocalWrite();
	}
};

export const handle = sequence(headers, namedDefault, session, bearer, authorize, freshness);

/** An unexpected error: logged with a reference id, shown without its text or stack (see unexpected-error.ts). */
export const handleError: HandleServerError = (input) => reportUnexpected(input);
