/**
 * Fleet matching on the demo fab: the RF-match chamber stands apart from the PGE-14 fleet on reflected
 * power; the air-leak chamber on OXV-22 carries the safety reminder. The part-swap chamber's offset
 * (Cl, H, F lines ≈ 2–2.5 chamber-to-chamber σ) lies within the fleet's own spread, so the calibrated
 * method (≤ 1 % false-flag runs) does not set it apart — README, monitoring/fleet.ts.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser } from 'playwright-core';
import { launch, screenshot, signInTo } from './browser.ts';
import { base, request, signIn } from './http.ts';
import { TEST_PASSWORD, TEST_USERS } from './global-setup.ts';
import { EPISODE_CHAMBERS } from '../../seeds/demo/fab.ts';

let browser: Browser;
beforeAll(async () => {
	browser = await launch();
});
afterAll(async () => {
	await browser?.close();
});

describe('fleet matching', () => {
	it('flags the RF-match chamber, names reflected power first, and gives a return check', async () => {
		const chamber = EPISODE_CHAMBERS.rfMatch;
		const ctx = await browser.newContext({ viewport: { width: 1280, height: 800 } });
		const page = await ctx.newPage();
		await signInTo(page, 'viewer', `/fleet`);
		// The wear shows in every PGE-14 step (seeds/demo/episodes.ts); it must be flagged in at least one.
		const steps = page.getByRole('navigation', { name: 'Recipe step' }).getByRole('link', { name: /PGE-14/ });
		const n = await steps.count();
		expect(n).toBeGreaterThanOrEqual(2);
		const row = page.getByTestId(`match-${chamber}`);
		let flaggedIn = 0;
		for (let i = n - 1; i >= 0; i--) {
			await steps.nth(i).click();
			await page.waitForURL(/step=/);
			await row.waitFor();
			if ((await row.getAttribute('data-flagged')) === 'true') {
				flaggedIn++;
				break;
			}
		}
		expect(flaggedIn).toBe(1);
		// Ranked by z: the worn chamber is among the first rows.
		const order = await page.locator('[data-testid^="match-"][data-flagged]').evaluateAll((els) => els.map((e) => e.getAttribute('data-testid')));
		expect(order.slice(0, 2)).toContain(`match-${chamber}`);
		await row.getByRole('link', { name: 'Features' }).click();
		await expect.poll(() => page.getByTestId('separating').textContent()).toMatch(/rf_reflected_w/);
		await row.getByRole('link', { name: 'Check' }).click();
		const check = page.getByTestId('return-check');
		await check.waitFor();
		expect(['pass', 'attention']).toContain(await check.getAttribute('data-verdict'));
		expect(await check.textContent()).toContain("the fab's own release procedure");
		await page.locator('[role="img"][aria-label^="O 777.4"] canvas').first().waitFor();
		await screenshot(page, 'fleet-matching');
		// A viewer has no "run now", and the server refuses it.
		expect(await page.getByRole('button', { name: 'Run matching now' }).count()).toBe(0);
		expect((await request('/fleet?/run', { cookie: await signIn('viewer'), form: { stepId: '1' } })).status).toBe(403);
		await ctx.close();
	});

	it('the air-leak chamber apart from the fleet carries the safety reminder; the part-swap chamber does not', async () => {
		const cookie = await signIn('viewer');
		const html = await (await request('/fleet', { cookie })).text();
		// every step's link: ?step=N (seeds/demo/episodes.ts: the air leak shows on OXV-22)
		const stepIds = [...new Set([...html.matchAll(/href="\?step=(\d+)"/g)].map((m) => m[1]))];
		expect(stepIds.length).toBeGreaterThan(1);
		let reminded = 0;
		for (const id of stepIds) {
			const page = await (await request(`/fleet?step=${id}&chamber=${EPISODE_CHAMBERS.airLeak}`, { cookie })).text();
			if (/Lockstep is not a safety system/.test(page) && /site(&#39;|')s gas detection, interlocks and safety procedures\s+are authoritative/.test(page)) reminded++;
			const swap = await (await request(`/fleet?step=${id}&chamber=${EPISODE_CHAMBERS.partSwap}`, { cookie })).text();
			expect(swap).not.toMatch(/Lockstep is not a safety system/);
		}
		expect(reminded).toBeGreaterThan(0);
	});

	it('runs matching now for an engineer', async () => {
		const cookie = await signIn('engineer');
		const html = await (await request('/fleet', { cookie })).text();
		const stepId = /name="stepId" value="(\d+)"/.exec(html)![1];
		const r = await request('/fleet?/run', { cookie, form: { stepId } });
		expect(r.status).toBe(200);
		expect((await request('/fleet?/run', { cookie, form: { stepId: 'x' } })).status).toBe(400);
	});
});
