/**
 * Security checks of issue 7 beyond security.e2e.ts and route-matrix.e2e.ts: session cookie flags
 * (Secure when forced), sessions ended by an admin's password reset, sign-in throttling over HTTP,
 * cross-origin POSTs refused on many actions, API token scope, stored text (acknowledgement comment,
 * maintenance comment, cause-code title, upload file name) rendered escaped in Chromium, every page
 * of the app free of CSP violations, and the framing/sniffing headers on every kind of response.
 */
import fs from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import type { Browser, Page } from 'playwright-core';
import { openDb } from '../../src/lib/server/db.ts';
import { launch, signInPage } from './browser.ts';
import { TEST_PASSWORD, TEST_USERS } from './global-setup.ts';
import { base, request, signIn } from './http.ts';
import { startServer } from '../load/server.ts';

const db = () => openDb({ client: 'better-sqlite3', filename: path.join(inject('dataDir'), 'lockstep.sqlite'), connectionString: null });
const sessionCookie = (r: Response) => r.headers.getSetCookie().find((c) => c.startsWith('lockstep_session=') && !/Max-Age=0/i.test(c)) ?? '';

async function createAccount(username: string, password: string, role = 'viewer') {
	const admin = await signIn('admin');
	const r = await request('/admin/users?/create', { cookie: admin, form: { username, displayName: username, password, role } });
	expect([200, 303]).toContain(r.status);
	const k = db();
	try {
		return String((await k('users').where({ username }).first('id')).id);
	} finally {
		await k.destroy();
	}
}
/** The viewer's sign-in form posted to another server (same origin as that server). */
const signInAt = (serverBase: string) =>
	fetch(`${serverBase}/sign-in`, {
		method: 'POST',
		redirect: 'manual',
		headers: { origin: serverBase, 'content-type': 'application/x-www-form-urlencoded', accept: 'text/html' },
		body: new URLSearchParams({ username: TEST_USERS.viewer, password: TEST_PASSWORD })
	});
const login = (username: string, password: string) => request('/sign-in', { form: { username, password, next: '/' } });

let browser: Browser;
beforeAll(async () => {
	browser = await launch();
});
afterAll(async () => {
	await browser?.close();
});

describe('session cookies', () => {
	it('are HttpOnly, SameSite=Lax and not Secure over plain http by default', async () => {
		const c = sessionCookie(await login(TEST_USERS.viewer, TEST_PASSWORD));
		expect(c).toMatch(/HttpOnly/i);
		expect(c).toMatch(/SameSite=Lax/i);
		expect(c).not.toMatch(/;\s*Secure/i);
	});

	it('are Secure when LOCKSTEP_SECURE_COOKIES=true (a second server over the same data)', async () => {
		const s = await startServer(inject('dataDir'), { LOCKSTEP_SECURE_COOKIES: 'true' });
		try {
			const r = await signInAt(s.base);
			expect(r.status).toBe(303);
			const c = sessionCookie(r);
			expect(c).toMatch(/;\s*Secure/i);
			expect(c).toMatch(/HttpOnly/i);
			expect(c).toMatch(/SameSite=Lax/i);
		} finally {
			await s.stop();
		}
	});
});

describe('sessions end', () => {
	it('when an admin resets the password: every session of the account is refused', async () => {
		const id = await createAccount('reset-probe', 'reset-first-password-1');
		const a = sessionCookie(await login('reset-probe', 'reset-first-password-1')).split(';')[0];
		const b = sessionCookie(await login('reset-probe', 'reset-first-password-1')).split(';')[0];
		expect((await request('/api/me', { cookie: a })).status).toBe(200);
		const admin = await signIn('admin');
		const r = await request('/admin/users?/reset', { cookie: admin, form: { id, password: 'reset-second-password-2' } });
		expect(r.status).toBe(200);
		expect((await request('/api/me', { cookie: a })).status).toBe(401);
		expect((await request('/api/me', { cookie: b })).status).toBe(401);
		expect(sessionCookie(await login('reset-probe', 'reset-second-password-2'))).not.toBe('');
	});
});

describe('sign-in throttling over HTTP', () => {
	afterAll(async () => {
		// Leave no failures behind: the per-address limit (20 from one address) counts loopback for every test.
		const k = db();
		try {
			await k('sign_in_attempts').where({ username: 'throttle-probe' }).delete();
		} finally {
			await k.destroy();
		}
	});

	it('refuses the account after 5 failures, even with the right password, and says when to retry', async () => {
		await createAccount('throttle-probe', 'throttle-right-password-1');
		for (let i = 0; i < 5; i++) {
			const r = await login('throttle-probe', `wrong-password-${i}`);
			expect(r.status).toBe(400);
			expect(await r.text()).toContain('do not match an active account');
		}
		const blocked = await login('throttle-probe', 'throttle-right-password-1');
		expect(blocked.status).toBe(429);
		expect(sessionCookie(blocked)).toBe('');
		expect(await blocked.text()).toMatch(/Too many failed sign-ins for this account\. Try again in 1[45] minutes, or ask an admin to reset your password: a reset lifts the lock/);
		// Another account from the same address is not affected.
		expect(sessionCookie(await login(TEST_USERS.viewer, TEST_PASSWORD))).not.toBe('');
	});
});

describe('sign-in hardening (issue 13)', () => {
	const clear = async (usernames: string[]) => {
		const k = db();
		try {
			await k('sign_in_attempts').whereIn('username', usernames).delete();
		} finally {
			await k.destroy();
		}
	};
	afterAll(() => clear(['race-probe', 'pw-probe']));

	it('30 wrong passwords for one account sent at once: 5 get 400, the other 25 get 429', async () => {
		const id = await createAccount('race-probe', 'race-right-password-1');
		const answers = await Promise.all(Array.from({ length: 30 }, (_, i) => login('race-probe', `wrong-${i}-password`)));
		const statuses = answers.map((r) => r.status);
		expect(statuses.filter((s) => s === 400)).toHaveLength(5);
		expect(statuses.filter((s) => s === 429)).toHaveLength(25);
		// the lock holds for the right password; an admin's reset lifts it, as the 429 says
		expect((await login('race-probe', 'race-right-password-1')).status).toBe(429);
		const admin = await signIn('admin');
		expect((await request('/admin/users?/reset', { cookie: admin, form: { id, password: 'race-second-password-2' } })).status).toBe(200);
		expect(sessionCookie(await login('race-probe', 'race-second-password-2'))).not.toBe('');
	});

	it('a password change is throttled like a sign-in', async () => {
		await createAccount('pw-probe', 'pw-right-password-1');
		const cookie = sessionCookie(await login('pw-probe', 'pw-right-password-1')).split(';')[0];
		const change = (current: string) => request('/account?/password', { cookie, form: { current, next: 'pw-new-password-22', repeat: 'pw-new-password-22' } });
		const statuses: number[] = [];
		for (let i = 0; i < 8; i++) statuses.push((await change(`not-it-${i}`)).status);
		expect(statuses).toEqual([400, 400, 400, 400, 400, 429, 429, 429]);
		const right = await change('pw-right-password-1');
		expect(right.status).toBe(429);
		expect(await right.text()).toMatch(/Too many failed password checks for this account/);
	});

	it('next= never leaves the site, however it is spelled', async () => {
		const cookie = await signIn('viewer');
		// as typed in the address bar: %09 decodes to a tab, which browsers drop, leaving //host
		for (const query of ['next=/%09/127.0.0.1:3201/pwned', 'next=/%0A/evil.example', 'next=//evil.example/', 'next=/%5Cevil.example', 'next=https://evil.example/']) {
			const r = await request(`/sign-in?${query}`, { cookie });
			expect(r.status).toBe(303);
			expect(r.headers.get('location')).toBe('/');
		}
		const posted = await request('/sign-in', { form: { username: TEST_USERS.viewer, password: TEST_PASSWORD, next: '/\t/127.0.0.1:3201/pwned' } });
		expect(posted.status).toBe(303);
		expect(posted.headers.get('location')).toBe('/');
		const kept = await request('/sign-in', { form: { username: TEST_USERS.viewer, password: TEST_PASSWORD, next: '/alarms?state=open' } });
		expect(kept.headers.get('location')).toBe('/alarms?state=open');
	});

	it('POST /sign-in?/default answers 400 with a reason, not 500', async () => {
		const r = await request('/sign-in?/default', { form: { username: 'x', password: 'y' } });
		expect(r.status).toBe(400);
		expect((await r.json()).error).toMatch(/names no action/);
	});

	it('npm start without ORIGIN: the sign-in form works on the address it serves', async () => {
		const s = await startServer(inject('dataDir'), { ORIGIN: '' });
		try {
			const r = await signInAt(s.base);
			expect(r.status).toBe(303);
			expect(sessionCookie(r)).not.toBe('');
		} finally {
			await s.stop();
		}
	});
});

describe('cross-origin POSTs are refused on every kind of action', () => {
	const actions: [string, string, Record<string, string>][] = [
		['/alarms?/acknowledge', 'engineer', { alarmId: '1', causeCode: 'X', disposition: 'continue', comment: 'forged' }],
		['/alarms?/close', 'engineer', { alarmId: '1', comment: 'forged' }],
		['/maintenance?/log', 'engineer', { chamberId: '1', kind: 'other', at: '2026-11-20T14:30', comment: 'forged' }],
		['/admin/cause-codes?/add', 'admin', { code: 'FORGED', title: 'Forged', category: 'other' }],
		['/admin/tokens?/create', 'admin', { name: 'forged', scope: 'ingest' }],
		['/admin/policy?/alarm', 'admin', { probe: '1' }],
		['/account?/password', 'viewer', { current: TEST_PASSWORD, next: 'forged-password-9', repeat: 'forged-password-9' }],
		['/account/mail?/save', 'viewer', { probe: '1' }],
		['/fleet?/run', 'engineer', { probe: '1' }],
		['/sign-out', 'viewer', {}]
	];
	for (const [action, role, form] of actions) {
		it(`${action} from http://evil.example → 403, nothing changed`, async () => {
			const cookie = await signIn(role as 'viewer');
			const r = await request(action, { cookie, form, origin: 'http://evil.example' });
			expect(r.status).toBe(403);
			expect(await r.text()).toMatch(/Cross-site POST form submissions are forbidden/);
			expect((await request('/api/me', { cookie })).status).toBe(200); // sign-out did not run either
		});
	}
	it('nothing forged was stored', async () => {
		const k = db();
		try {
			expect(await k('cause_codes').where({ code: 'FORGED' }).first()).toBeUndefined();
			expect(await k('api_tokens').where({ name: 'forged' }).first()).toBeUndefined();
			expect(await k('alarm_actions').where({ comment: 'forged' }).first()).toBeUndefined();
			expect(await k('maintenance_events').where({ comment: 'forged' }).first()).toBeUndefined();
		} finally {
			await k.destroy();
		}
	});
});

describe('API token scope', () => {
	const tokens: Record<string, string> = {};
	beforeAll(async () => {
		const admin = await signIn('admin');
		for (const scope of ['ingest', 'read']) {
			const r = await request('/admin/tokens?/create', { cookie: admin, form: { name: `scope-${scope}`, scope } });
			tokens[scope] = /lst_[A-Za-z0-9_-]{43}/.exec(await r.text())?.[0] ?? '';
			expect(tokens[scope]).not.toBe('');
		}
	});
	const as = (scope: string, path: string, init: RequestInit = {}) =>
		fetch(`${base()}${path}`, { redirect: 'manual', ...init, headers: { authorization: `Bearer ${tokens[scope]}`, ...(init.headers as Record<string, string>) } });

	it('an ingest token cannot read any API', async () => {
		for (const p of ['/api/heatmap', '/api/fleet', '/api/wafers/1', '/api/chambers/DE01-A/series', '/api/chambers/DE01-A/wafers', '/api/me', '/api/uploads']) {
			const r = await as('ingest', p);
			expect(r.status, p).toBe(403);
			expect((await r.json()).error).toMatch(/scope "ingest"|needs|cannot/);
		}
	});

	it('an ingest token cannot acknowledge: pages ignore tokens, so the action is unauthenticated', async () => {
		const r = await as('ingest', '/alarms?/acknowledge', {
			method: 'POST',
			body: new URLSearchParams({ alarmId: '1', causeCode: 'X', disposition: 'continue' }),
			headers: { origin: base(), 'content-type': 'application/x-www-form-urlencoded', accept: 'application/json' }
		});
		expect(r.status).toBe(401);
		const k = db();
		try {
			expect(await k('alarm_actions').where({ alarm_id: 1, action: 'acknowledged' }).whereNull('user_id').first()).toBeUndefined();
		} finally {
			await k.destroy();
		}
	});

	it('a read token reads but cannot POST /api/ingest', async () => {
		expect((await as('read', '/api/heatmap')).status).toBe(200);
		expect((await as('read', '/api/wafers/1')).status).toBe(200);
		const r = await as('read', '/api/ingest?name=x.csv', { method: 'POST', body: 'wafer_id\n', headers: { 'content-type': 'text/csv' } });
		expect(r.status).toBe(403);
	});
});

const PAYLOAD = (n: number) => `<img src=x onerror="window.__pwned=${n}"><script>window.__pwned=${n + 10}</script>`;

async function expectInert(page: Page, url: string, marker: string) {
	const dialogs: string[] = [];
	page.on('dialog', (d) => {
		dialogs.push(d.message());
		void d.dismiss();
	});
	await page.goto(url);
	await page.waitForLoadState('networkidle');
	expect(await page.evaluate(() => (window as unknown as { __pwned?: number }).__pwned)).toBeUndefined();
	expect(dialogs).toEqual([]);
	expect(await page.locator('img[src="x"]').count()).toBe(0);
	// Shown as text, or as the value of an edit field (which is text too).
	const shown = await page.evaluate(() => document.body.innerText + [...document.querySelectorAll('input, textarea')].map((e) => (e as HTMLInputElement).value).join('\n'));
	expect(shown).toContain(marker);
}

describe('stored text renders escaped in Chromium', () => {
	let alarmId = 0;
	let chamberId = 0;
	beforeAll(async () => {
		const k = db();
		try {
			const ws = await k('wafer_steps').first('chamber_id', 'recipe_step_id');
			const [a] = await k('alarms').insert({ chamber_id: ws.chamber_id, recipe_step_id: ws.recipe_step_id, rule: 'xss-probe', severity: 'warning', state: 'open', opened_at: Date.now(), last_seen_at: Date.now(), wafer_count: 1 }).returning('id');
			alarmId = Number(a.id ?? a);
			await k('alarm_actions').insert({ alarm_id: alarmId, at: Date.now(), action: 'opened', to_state: 'open' });
			chamberId = Number(ws.chamber_id);
		} finally {
			await k.destroy();
		}
	});
	afterAll(async () => {
		// Close the probe alarm so the other suites' queues are as the demo left them.
		await request('/alarms?/close', { cookie: await signIn('engineer'), form: { alarmId: String(alarmId), comment: 'probe done' } });
	});

	const session = async (who: 'engineer' | 'admin') => {
		const ctx = await browser.newContext({ viewport: { width: 1280, height: 900 } });
		const page = await ctx.newPage();
		await signInPage(page, base(), TEST_USERS[who], TEST_PASSWORD);
		await page.waitForURL(`${base()}/`);
		return { ctx, page };
	};

	it('an acknowledgement comment', async () => {
		const k = db();
		const cause = (await k('cause_codes').where({ active: true }).first('code')).code;
		await k.destroy();
		const r = await request('/alarms?/acknowledge', { cookie: await signIn('engineer'), form: { alarmId: String(alarmId), causeCode: cause, disposition: 'continue', comment: PAYLOAD(1) } });
		expect(r.status).toBe(200);
		const { ctx, page } = await session('engineer');
		await expectInert(page, `${base()}/alarms/${alarmId}`, 'window.__pwned=1');
		await ctx.close();
	});

	it('a maintenance comment', async () => {
		const at = new Date(Date.now() - 3_600_000).toISOString().slice(0, 16);
		const r = await request('/maintenance?/log', { cookie: await signIn('engineer'), form: { chamberId: String(chamberId), kind: 'other', at, comment: PAYLOAD(2) } });
		expect(r.status).toBe(200);
		const k = db();
		const code = (await k('chambers').where({ id: chamberId }).first('code')).code;
		await k.destroy();
		const { ctx, page } = await session('engineer');
		await expectInert(page, `${base()}/maintenance?chamber=${encodeURIComponent(code)}`, 'window.__pwned=2');
		await ctx.close();
	});

	it('a cause-code title (on the admin list and in the acknowledgement form)', async () => {
		const r = await request('/admin/cause-codes?/add', { cookie: await signIn('admin'), form: { code: 'XSS-PROBE', title: PAYLOAD(3), category: 'other' } });
		expect(r.status).toBe(200);
		const { ctx, page } = await session('admin');
		await expectInert(page, `${base()}/admin/cause-codes`, 'window.__pwned=3');
		await ctx.close();
		// Retire it again so other suites' cause lists are unchanged.
		const k = db();
		const id = (await k('cause_codes').where({ code: 'XSS-PROBE' }).first('id')).id;
		await k.destroy();
		await request('/admin/cause-codes?/retire', { cookie: await signIn('admin'), form: { id: String(id) } });
	});

	it('an upload file name', async () => {
		const name = '<img src=x onerror="window.__pwned=4">.csv';
		const cookie = await signIn('engineer');
		const r = await fetch(`${base()}/api/ingest?name=${encodeURIComponent(name)}`, { method: 'POST', body: '', headers: { cookie, origin: base(), 'content-type': 'text/csv' } });
		expect(r.status).toBe(400);
		const { ctx, page } = await session('engineer');
		await expectInert(page, `${base()}/uploads`, 'window.__pwned=4');
		await ctx.close();
	});
});

/** Every page route of the app with a sample path (checked against src/routes below). */
const PAGES: Record<string, string> = {
	'/': '/',
	'/alarms': '/alarms',
	'/alarms/[id]': '/alarms/1',
	'/baselines': '/baselines',
	'/baselines/[chamber]/[step]': '/baselines/DE01-A/1',
	'/maintenance': '/maintenance',
	'/admin/policy': '/admin/policy',
	'/admin/cause-codes': '/admin/cause-codes',
	'/fleet': '/fleet',
	'/chambers/[code]': '/chambers/DE01-A',
	'/wafers/[id]': '/wafers/1',
	'/sign-in': '/sign-in',
	'/sign-out': '/sign-out',
	'/account': '/account',
	'/admin/users': '/admin/users',
	'/uploads': '/uploads',
	'/uploads/feature-sets': '/uploads/feature-sets',
	'/admin/tokens': '/admin/tokens',
	'/account/mail': '/account/mail',
	'/admin/mail': '/admin/mail',
	'/unsubscribe': '/unsubscribe?t=not-a-token',
	'/admin/structure': '/admin/structure',
	'/account/tokens': '/account/tokens',
	'/qualifications': '/qualifications',
	// the demo seeds no campaign: the page's not-found answer is walked (it renders in the same shell)
	'/qualifications/[id]': '/qualifications/999999'
};

function pageRouteIds(dir = 'src/routes', prefix = ''): string[] {
	const out: string[] = [];
	const entries = fs.readdirSync(dir, { withFileTypes: true });
	if (entries.some((e) => e.isFile() && /^\+page(\.server)?\.ts$|^\+page\.svelte$/.test(e.name))) out.push(prefix || '/');
	for (const e of entries) if (e.isDirectory()) out.push(...pageRouteIds(path.join(dir, e.name), `${prefix}/${e.name}`));
	return out;
}

describe('every page satisfies the Content-Security-Policy', () => {
	it('the list below covers every page route', () => {
		expect(pageRouteIds().sort()).toEqual(Object.keys(PAGES).sort());
	});

	it('walking every page as admin in Chromium logs no CSP violation', async () => {
		const ctx = await browser.newContext({ viewport: { width: 1280, height: 900 } });
		const page = await ctx.newPage();
		const violations: string[] = [];
		page.on('console', (m) => {
			if (/Content Security Policy|Refused to/i.test(m.text())) violations.push(`${page.url()}: ${m.text()}`);
		});
		await page.addInitScript(() => {
			document.addEventListener('securitypolicyviolation', (e) => console.error(`Refused to load (CSP ${e.violatedDirective}): ${e.blockedURI}`));
		});
		await signInPage(page, base(), TEST_USERS.admin, TEST_PASSWORD);
		await page.waitForURL(`${base()}/`);
		const seen: string[] = [];
		for (const p of Object.values(PAGES)) {
			await page.goto(`${base()}${p}`);
			await page.waitForLoadState('networkidle');
			seen.push(new URL(page.url()).pathname);
		}
		expect(violations).toEqual([]);
		expect(seen.length).toBe(Object.keys(PAGES).length);
		await ctx.close();
	});
});

describe('framing and sniffing headers on every response', () => {
	it('pages, API answers, 404s, redirects, static files and SvelteKit\'s own CSRF refusal carry nosniff, DENY and frame-ancestors', async () => {
		const admin = await signIn('admin');
		const asset = fs.readdirSync('build/client/_app/immutable/entry').find((f) => f.endsWith('.js'));
		expect(asset).toBeTruthy();
		const probes: { path: string; cookie: string; form?: Record<string, string>; origin?: string; what?: string }[] = [
			...Object.values(PAGES).map((p) => ({ path: p, cookie: admin })),
			{ path: '/', cookie: '' }, // redirect to sign-in
			{ path: '/api/heatmap', cookie: admin },
			{ path: '/api/heatmap', cookie: '' }, // 401 JSON
			{ path: '/api/wafers/999999999', cookie: admin }, // 404 JSON
			{ path: '/no-such-page', cookie: admin }, // 404 page
			// served by adapter-node's static middleware, before any SvelteKit hook runs (scripts/serve.js adds them)
			{ path: '/_app/version.json', cookie: '' },
			{ path: `/_app/immutable/entry/${asset}`, cookie: '' },
			{ path: '/favicon.svg', cookie: '' },
			// SvelteKit's own cross-site form refusal, answered before the hooks
			{ path: '/sign-in', cookie: '', form: { username: 'x', password: 'y' }, origin: 'http://evil.example', what: 'CSRF 403' }
		];
		const missing: string[] = [];
		const statuses: number[] = [];
		for (const p of probes) {
			const r = await request(p.path, { cookie: p.cookie || undefined, form: p.form, origin: p.origin });
			statuses.push(r.status);
			const what = `${p.what ?? p.path} as ${p.cookie ? 'admin' : 'anonymous'} (${r.status})`;
			if (r.headers.get('x-content-type-options') !== 'nosniff') missing.push(`${what}: nosniff`);
			if (r.headers.get('x-frame-options') !== 'DENY') missing.push(`${what}: x-frame-options`);
			if (!/frame-ancestors 'none'/.test(r.headers.get('content-security-policy') ?? '')) missing.push(`${what}: frame-ancestors`);
		}
		expect(missing).toEqual([]);
		// the static probes really were files, and the cross-site POST really was refused
		expect(statuses.slice(-4)).toEqual([200, 200, 200, 403]);
	});
});
