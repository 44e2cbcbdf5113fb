/**
 * Security checks over the real server: stored text is rendered escaped (an injected script does not
 * run in Chromium), the pages satisfy their own Content-Security-Policy, and a password change ends
 * the account's other sessions.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser } from 'playwright-core';
import { launch, screenshot, signInPage } from './browser.ts';
import { base, request, signIn } from './http.ts';

let browser: Browser;
beforeAll(async () => {
	browser = await launch();
});
afterAll(async () => {
	await browser?.close();
});

const PAYLOAD = `<img src=x onerror="window.__pwned=1"><script>window.__pwned=2</script>`;

describe('stored text is escaped', () => {
	it('a display name with markup shows as text and runs nothing', async () => {
		const admin = await signIn('admin');
		const created = await request('/admin/users?/create', {
			cookie: admin,
			form: { username: 'xss-probe', displayName: PAYLOAD.slice(0, 110), password: 'xss-probe-password', role: 'viewer' }
		});
		expect([200, 303]).toContain(created.status);
		const ctx = await browser.newContext();
		const page = await ctx.newPage();
		const dialogs: string[] = [];
		page.on('dialog', (d) => {
			dialogs.push(d.message());
			void d.dismiss();
		});
		await signInPage(page, base(), 'xss-probe', 'xss-probe-password');
		await page.waitForURL(`${base()}/`);
		await page.goto(`${base()}/account`);
		expect(await page.evaluate(() => (window as unknown as { __pwned?: number }).__pwned)).toBeUndefined();
		expect(dialogs).toEqual([]);
		// The markup is visible as text.
		expect(await page.getByTestId('whoami').textContent()).toContain('<img src=x');
		await screenshot(page, 'security-escaped-name');
		await ctx.close();
	});
});

describe('Content-Security-Policy', () => {
	it('the main pages load without a single CSP violation', async () => {
		const ctx = await browser.newContext({ viewport: { width: 1280, height: 800 } });
		const page = await ctx.newPage();
		const violations: string[] = [];
		page.on('console', (m) => {
			if (/Content Security Policy|Refused to/i.test(m.text())) violations.push(`${page.url()}: ${m.text()}`);
		});
		await signInPage(page, base(), 'e2e-admin', 'e2e-password-42');
		await page.waitForURL(`${base()}/`);
		for (const path of ['/', '/account', '/admin/users', '/sign-in']) {
			await page.goto(`${base()}${path}`);
			await page.waitForLoadState('networkidle');
		}
		expect(violations).toEqual([]);
		await ctx.close();
	});

	it('forbids framing and sniffing on every response', async () => {
		for (const path of ['/sign-in', '/api/health']) {
			const r = await request(path);
			expect(r.headers.get('x-content-type-options')).toBe('nosniff');
			expect(r.headers.get('x-frame-options')).toBe('DENY');
		}
		const page = await request('/sign-in');
		expect(page.headers.get('content-security-policy')).toMatch(/frame-ancestors 'none'/);
		expect(page.headers.get('content-security-policy')).toMatch(/script-src 'self'/);
	});
});

describe('sessions', () => {
	it('changing the password signs the account out everywhere else', async () => {
		const admin = await signIn('admin');
		await request('/admin/users?/create', {
			cookie: admin,
			form: { username: 'pw-change', displayName: 'Pw Change', password: 'first-password-1', role: 'viewer' }
		});
		const login = async (password: string) => {
			const r = await request('/sign-in', { form: { username: 'pw-change', password, next: '/' } });
			return (r.headers.getSetCookie().find((c) => c.startsWith('lockstep_session=')) ?? '').split(';')[0];
		};
		const other = await login('first-password-1');
		const mine = await login('first-password-1');
		expect((await request('/api/me', { cookie: other })).status).toBe(200);
		const changed = await request('/account?/password', {
			cookie: mine,
			form: { current: 'first-password-1', next: 'second-password-2', repeat: 'second-password-2' }
		});
		expect(changed.status).toBe(200);
		expect((await request('/api/me', { cookie: other })).status).toBe(401);
		expect((await login('first-password-1')) === '').toBe(true);
		expect(await login('second-password-2')).toMatch(/^lockstep_session=/);
	});
});
