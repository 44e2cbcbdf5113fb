/**
 * The route × role matrix: every page, form action and API route, asked by each kind of caller, must
 * answer as this table says. The table is written out here on purpose, separately from
 * src/lib/server/route-policy.ts, so that loosening the policy fails this test.
 */
import fs from 'node:fs';
import path from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { request, signIn, type Who } from './http.ts';

type Min = 'public' | 'viewer' | 'engineer' | 'admin';
interface Entry {
	/** A concrete path for the route id (dynamic routes get a sample). */
	path?: string;
	GET?: Min;
	actions?: Record<string, Min>;
	POST?: Min;
	/** form fields for action probes (an empty form is fine for most; validation answers 400) */
	form?: Record<string, string>;
}

export const EXPECTED: Record<string, Entry> = {
	// Alarm queue, baselines, maintenance, fleet matching, admin policy and cause codes (demo-seed samples).
	'/alarms': { GET: 'viewer', actions: { acknowledge: 'engineer', close: 'engineer' } },
	'/alarms/[id]': { path: '/alarms/1', GET: 'viewer', actions: { acknowledge: 'engineer', close: 'engineer' } },
	'/baselines': { GET: 'viewer' },
	'/baselines/[chamber]/[step]': { path: '/baselines/DE01-A/1', GET: 'viewer', actions: { choose: 'viewer', draft: 'engineer', approve: 'engineer', discard: 'engineer', rescore: 'engineer' } },
	'/maintenance': { GET: 'viewer', actions: { log: 'engineer' } },
	'/admin/policy': { GET: 'admin', actions: { alarm: 'admin', baseline: 'admin', ingest: 'admin' } },
	'/admin/cause-codes': { GET: 'admin', actions: { add: 'admin', rename: 'admin', retire: 'admin', restore: 'admin' } },
	// An unknown task id answers 404: GET is probed by role with a real rescore task in baselines-build.e2e.ts.
	'/api/tasks/[id]': { path: '/api/tasks/none' },
	'/fleet': { GET: 'viewer', actions: { run: 'engineer', model: 'engineer' } },
	'/': { GET: 'viewer' },
	// Fleet heatmap, chamber and wafer-step screens and their JSON APIs (demo-seed samples).
	'/api/heatmap': { GET: 'viewer' },
	'/chambers/[code]': { path: '/chambers/DE01-A', GET: 'viewer' },
	'/api/chambers/[code]/series': { path: '/api/chambers/DE01-A/series', GET: 'viewer' },
	'/api/chambers/[code]/wafers': { path: '/api/chambers/DE01-A/wafers', GET: 'viewer' },
	'/wafers/[id]': { path: '/wafers/1', GET: 'viewer', actions: { acknowledge: 'engineer' } },
	'/api/wafers/[id]': { path: '/api/wafers/1', GET: 'viewer' },
	'/sign-in': { GET: 'public', actions: { default: 'public' } },
	'/sign-out': { GET: 'public', actions: { default: 'viewer' } },
	'/account': { GET: 'viewer', actions: { password: 'viewer' } },
	'/admin/users': { GET: 'admin', actions: { create: 'admin', reset: 'admin', role: 'admin', disable: 'admin', enable: 'admin' } },
	'/api/health': { GET: 'public' },
	'/api/me': { GET: 'viewer' },
	'/api/fleet': { GET: 'viewer' },
	'/uploads': { GET: 'engineer' },
	'/uploads/feature-sets': { GET: 'viewer', actions: { accept: 'engineer', dismiss: 'engineer' } },
	'/admin/tokens': { GET: 'admin', actions: { create: 'admin', revoke: 'admin' } },
	'/api/ingest': { POST: 'engineer' },
	'/api/matching': { path: '/api/matching?recipe=PGE-14&step=main_etch', GET: 'viewer', POST: 'engineer' },
	'/api/alarms': { GET: 'viewer' },
	'/api/alarms/acknowledge': { POST: 'engineer' },
	'/api/uploads': { GET: 'engineer' },
	// Mail. /unsubscribe's GET needs a signed token (a bad one answers 400): mail-unsubscribe.e2e.ts tests it.
	'/account/mail': { GET: 'viewer', actions: { save: 'viewer' } },
	'/admin/mail': { GET: 'admin', actions: { send: 'admin', requeue: 'admin', policy: 'admin' } },
	'/unsubscribe': { actions: { default: 'public' } },
	// Fab structure, personal tokens, the API document. POST /api/chambers by role and token is in api-walkthrough.e2e.ts.
	'/admin/structure': {
		GET: 'admin',
		actions: { area: 'admin', tool: 'admin', chamber: 'admin', rename: 'admin', move: 'admin', retire: 'admin', restore: 'admin' }
	},
	'/api/chambers': { GET: 'viewer', POST: 'admin' },
	'/account/tokens': { GET: 'viewer', actions: { create: 'viewer', revoke: 'viewer' } },
	'/api/openapi.json': { GET: 'public' },
	// Qualification campaigns. The demo seeds none: a campaign's page and API are probed by role in
	// qualification-campaign.e2e.ts; an unknown id answers 404 to those allowed.
	'/qualifications': { GET: 'viewer', actions: { create: 'engineer' } },
	'/qualifications/[id]': { path: '/qualifications/999999', actions: { approve: 'engineer' } },
	'/api/qualifications': { GET: 'viewer', POST: 'engineer' },
	'/api/qualifications/[id]': { path: '/api/qualifications/999999' },
	'/api/qualifications/[id]/approve': { path: '/api/qualifications/999999/approve', POST: 'engineer' }
};

const WHO: Who[] = ['anonymous', 'viewer', 'engineer', 'admin'];
const RANK: Record<Min, number> = { public: -1, viewer: 0, engineer: 1, admin: 2 };
const rank = (w: Who) => (w === 'anonymous' ? -1 : RANK[w]);

/** Route ids from the file system, the way SvelteKit derives them. */
function routeIds(dir = 'src/routes', prefix = ''): string[] {
	const out: string[] = [];
	const entries = fs.readdirSync(dir, { withFileTypes: true });
	if (entries.some((e) => e.isFile() && /^\+(page(\.server)?\.ts|page\.svelte|server\.ts)$/.test(e.name))) out.push(prefix || '/');
	for (const e of entries) if (e.isDirectory()) out.push(...routeIds(path.join(dir, e.name), `${prefix}/${e.name}`));
	return out;
}

const cookies: Partial<Record<Who, string>> = {};
beforeAll(async () => {
	for (const w of WHO) cookies[w] = await signIn(w);
});

describe('route × role matrix', () => {
	it('covers every route in src/routes', () => {
		expect(routeIds().sort()).toEqual(Object.keys(EXPECTED).sort());
	});

	for (const [id, entry] of Object.entries(EXPECTED)) {
		const p = entry.path ?? id;
		const isApi = id.startsWith('/api/');
		if (entry.GET) {
			for (const who of WHO) {
				const allowed = rank(who) >= RANK[entry.GET];
				it(`GET ${p} as ${who} → ${allowed ? 'allowed' : 'refused'}`, async () => {
					const r = await request(p, { cookie: cookies[who] });
					if (allowed) {
						expect([200, 303]).toContain(r.status);
						if (r.status === 303) expect(r.headers.get('location')).not.toMatch(/^\/sign-in/);
					} else if (who === 'anonymous') {
						if (isApi) expect(r.status).toBe(401);
						else {
							expect(r.status).toBe(303);
							expect(r.headers.get('location')).toMatch(/^\/sign-in\?next=/);
						}
					} else expect(r.status).toBe(403);
				});
			}
		}
		for (const [action, min] of Object.entries(entry.actions ?? {})) {
			for (const who of WHO) {
				const allowed = rank(who) >= RANK[min];
				it(`POST ${p} ?/${action} as ${who} → ${allowed ? 'allowed' : 'refused'}`, async () => {
					// A fresh session: some actions (sign-out) end the session they run in.
					const cookie = who === 'anonymous' ? '' : await signIn(who);
					const q = action === 'default' ? '' : `?/${action}`;
					const r = await request(`${p}${q}`, { cookie, form: entry.form ?? { probe: '1' } });
					if (allowed) expect([200, 303, 400, 404]).toContain(r.status);
					else expect(r.status).toBe(who === 'anonymous' ? 401 : 403);
				});
			}
		}
	}
});

describe('forgery and sessions', () => {
	it('refuses a cross-origin form POST (SvelteKit origin check)', async () => {
		const cookie = await signIn('admin');
		const r = await request('/admin/users?/create', {
			cookie,
			form: { username: 'forged', displayName: 'F', password: 'forged-password', role: 'admin' },
			origin: 'http://evil.example'
		});
		expect(r.status).toBe(403);
		const list = await request('/admin/users', { cookie });
		expect(await list.text()).not.toContain('forged');
	});

	it('sets the session cookie httpOnly and SameSite=Lax', async () => {
		const r = await fetch(`${(await import('./http.ts')).base()}/sign-in`, {
			method: 'POST',
			redirect: 'manual',
			headers: { origin: (await import('./http.ts')).base(), 'content-type': 'application/x-www-form-urlencoded', accept: 'text/html' },
			body: new URLSearchParams({ username: 'e2e-viewer', password: 'e2e-password-42' })
		});
		const c = r.headers.getSetCookie().find((x) => x.startsWith('lockstep_session='))!;
		expect(c).toMatch(/HttpOnly/i);
		expect(c).toMatch(/SameSite=Lax/i);
	});

	it('signing out ends the session on the server', async () => {
		const cookie = await signIn('viewer');
		expect((await request('/api/me', { cookie })).status).toBe(200);
		const out = await request('/sign-out', { cookie, form: {} });
		expect(out.status).toBe(303);
		expect((await request('/api/me', { cookie })).status).toBe(401);
	});

	it('a wrong password gets the generic message and no cookie', async () => {
		const r = await request('/sign-in', { form: { username: 'e2e-viewer', password: 'not-the-password' } });
		expect(r.status).toBe(400);
		expect(r.headers.getSetCookie().some((c) => c.startsWith('lockstep_session=') && !c.includes('Max-Age=0'))).toBe(false);
		expect(await r.text()).toContain('do not match an active account');
	});

	it('sends security headers and a Content-Security-Policy', async () => {
		const r = await request('/sign-in');
		expect(r.headers.get('x-content-type-options')).toBe('nosniff');
		expect(r.headers.get('content-security-policy')).toMatch(/frame-ancestors 'none'/);
	});
});
