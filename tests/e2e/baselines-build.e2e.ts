/**
 * The baseline lifecycle in the browser on the demo fab: pick golden wafers, fit a draft, review it,
 * meet the four-eyes policy, approve with a background rescore and watch it finish.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser } from 'playwright-core';
import { launch, screenshot } from './browser.ts';
import { base, request, signIn } from './http.ts';
import { TEST_PASSWORD, TEST_USERS } from './global-setup.ts';

/** Sign in through the form, asking for `path` so the landing page is not loaded first. */
async function signInTo(page: import('playwright-core').Page, who: keyof typeof TEST_USERS, path: string) {
	await page.goto(`${base()}/sign-in?next=${encodeURIComponent(path)}`);
	await page.getByLabel('User name').fill(TEST_USERS[who]);
	await page.getByLabel('Password').fill(TEST_PASSWORD);
	await page.getByRole('button', { name: 'Sign in' }).click();
	await page.waitForURL((u) => u.pathname === path.split('?')[0]);
	if (!page.url().endsWith(path)) await page.goto(`${base()}${path}`);
}

let browser: Browser;
let admin: string;
let PAGE = '/baselines/DE01-A/1';

async function setFourEyes(on: boolean) {
	const form: Record<string, string> = { seasoningWafers: '30', alpha: '0.01', warningAlpha: '0.05', requalifyOn: 'wet_clean' };
	if (on) form.fourEyes = 'on';
	const body = new URLSearchParams(form);
	body.append('requalifyOn', 'part_swap');
	const r = await fetch(`${base()}/admin/policy?/baseline`, { method: 'POST', headers: { cookie: admin, origin: base(), 'content-type': 'application/x-www-form-urlencoded', accept: 'text/html' }, body, redirect: 'manual' });
	expect(r.status).toBe(200);
}

beforeAll(async () => {
	browser = await launch();
	admin = await signIn('admin');
	await setFourEyes(true);
});
afterAll(async () => {
	await setFourEyes(false);
	await browser?.close();
});

describe('baselines in the browser', () => {
	it('lists chamber × step baselines with who built and approved them', async () => {
		const ctx = await browser.newContext({ viewport: { width: 1280, height: 800 } });
		const page = await ctx.newPage();
		await signInTo(page, 'viewer', `/baselines`);
		const row = page.getByTestId('pair-DE01-A-main_etch');
		expect(await row.textContent()).toMatch(/v\d+/);
		// The next test needs a chamber × step out of requalify (its default range then holds fair,
		// unseasoned wafers): the first such row.
		const fair = page.locator('[data-testid^="pair-"]').filter({ hasNotText: 'requalify' }).first();
		PAGE = (await fair.locator('a').first().getAttribute('href'))!;
		await screenshot(page, 'baselines-list');
		// A viewer reads the workspace but gets no controls; the server refuses a forged fit.
		await page.goto(`${base()}${PAGE}`);
		expect(await page.getByTestId('draft-form').getByRole('button').count()).toBe(0);
		const forged = await request(`${PAGE}?/draft`, { cookie: await signIn('viewer'), form: { alpha: '0.01', components: 'auto', scaling: 'autoscale' } });
		expect(forged.status).toBe(403);
		await ctx.close();
	});

	it('builds a draft, is refused by four-eyes, and a second person approves it with a rescore', async () => {
		const ctx = await browser.newContext({ viewport: { width: 1280, height: 800 } });
		const page = await ctx.newPage();
		// Three weeks of wafers: enough fair candidates whatever the time of day the demo was seeded
		// (a week can hold a wet clean whose seasoning wafers are excluded). Times are the user's (UTC).
		const from = new Date(Date.now() - 21 * 86_400_000).toISOString().slice(0, 16);
		await signInTo(page, 'engineer', `${PAGE}${PAGE.includes('?') ? '&' : '?'}from=${encodeURIComponent(from)}`);
		const draftForm = page.getByTestId('draft-form');
		// Excluded wafers are unticked with their reason; the fair ones are ticked.
		const ticked = await draftForm.locator('input[name="waferStepId"]:checked').count();
		expect(ticked).toBeGreaterThanOrEqual(10);
		// A bad α is refused with a field error and the ticks stay.
		await draftForm.getByLabel('α').fill('0.9');
		await draftForm.getByRole('button', { name: /Fit draft/ }).click();
		await expect.poll(() => draftForm.textContent()).toContain('α must lie between 0 and 0.5');
		expect(await draftForm.locator('input[name="waferStepId"]:checked').count()).toBe(ticked);
		await draftForm.getByLabel('α').fill('0.01');
		await draftForm.getByRole('button', { name: /Fit draft/ }).click();
		await page.getByTestId('draft-facts').waitFor();
		expect(await page.getByTestId('draft-facts').textContent()).toContain(String(ticked));
		await page.locator('[role="img"][aria-label^="Explained variance"] canvas').first().waitFor();
		await screenshot(page, 'baseline-draft-review');
		// Four-eyes: the builder is told, and the server refuses.
		expect(await page.getByText('the policy asks another engineer to approve it').count()).toBe(1);
		await page.getByTestId('approve-form').getByRole('button', { name: /Approve/ }).click();
		await expect.poll(() => page.getByTestId('approve-error').textContent()).toContain('other than the engineer who built');
		await screenshot(page, 'baseline-four-eyes');
		await ctx.close();

		const ctx2 = await browser.newContext({ viewport: { width: 1280, height: 800 } });
		const p2 = await ctx2.newPage();
		await signInTo(p2, 'admin', `${PAGE}`);
		const approve = p2.getByTestId('approve-form');
		expect(await approve.getByLabel(/then rescore/).isChecked()).toBe(true);
		await approve.getByRole('button', { name: /Approve/ }).click();
		await expect.poll(() => p2.getByTestId('flash').textContent()).toMatch(/is now the active baseline/);
		const progress = p2.getByTestId('task-progress');
		await expect.poll(() => progress.getAttribute('data-state'), { timeout: 30_000 }).toBe('done');
		// The task API by role: anonymous refused, a viewer reads the progress of a real task.
		const taskId = (await progress.getAttribute('data-task-id'))!;
		expect((await request(`/api/tasks/${taskId}`)).status).toBe(401);
		const viewerView = await request(`/api/tasks/${taskId}`, { cookie: await signIn('viewer') });
		expect(viewerView.status).toBe(200);
		expect(await viewerView.json()).toMatchObject({ state: 'done', kind: 'rescore' });
		await screenshot(p2, 'baseline-approved-rescored');
		expect(await p2.getByTestId('active-baseline').textContent()).toContain('Test admin');
		await ctx2.close();
	});
});
