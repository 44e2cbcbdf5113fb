/**
 * The module engineer's morning on the demo fab, end to end in Chromium: sign in → the fleet heatmap
 * flags the air-leak chamber → open it → open its worst wafer → the nitrogen bands lead the
 * contributions → acknowledge the alarm there with a cause code → the queue shows it acknowledged and
 * the audit trail has the entry → a viewer sees no acknowledge control, and a forged POST is refused.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser } from 'playwright-core';
import { launch, screenshot, signInPage } from './browser.ts';
import { base, request, signIn } from './http.ts';
import { TEST_PASSWORD, TEST_USERS } from './global-setup.ts';
import { EPISODE_CHAMBERS } from '../../seeds/demo/fab.ts';

const LEAK = EPISODE_CHAMBERS.airLeak;
let browser: Browser;
let waferPath = '';
let alarmIds: number[] = [];

beforeAll(async () => {
	browser = await launch();
});
afterAll(async () => {
	await browser?.close();
});

describe('the morning flow', () => {
	it('engineer: heatmap → leak chamber → worst wafer → N2 bands → acknowledge with a cause', async () => {
		const ctx = await browser.newContext({ viewport: { width: 1280, height: 800 } });
		const page = await ctx.newPage();
		await signInPage(page, base(), TEST_USERS.engineer, TEST_PASSWORD);
		await page.waitForURL(`${base()}/`);
		await page.getByTestId('heatmap').waitFor();
		const row = page.getByRole('row').filter({ has: page.getByRole('rowheader').getByText(LEAK, { exact: true }) });
		await expect.poll(() => row.getByText(/\d+ open/).count()).toBeGreaterThan(0);
		await screenshot(page, 'morning-1-heatmap');

		await page.goto(`${base()}/?window=7d`);
		await page.getByTestId('heatmap').waitFor();
		await row.locator('a[aria-label*="beyond limit"]').last().click();
		await page.waitForURL(new RegExp(`/chambers/${LEAK}`));
		const table = page.getByTestId('wafer-table');
		await table.getByRole('button', { name: /State/ }).click();
		await expect.poll(() => table.locator('th[aria-sort]').getAttribute('aria-sort')).toBe('descending');
		await screenshot(page, 'morning-2-chamber');
		await table.locator('tbody tr a').first().click();
		await page.waitForURL(/\/wafers\/\d+/);
		waferPath = new URL(page.url()).pathname;

		const top = (await page.getByTestId('contributors').textContent()) ?? '';
		expect(['337.1', '357.7', '380.5'].filter((b) => top.includes(b)).length).toBeGreaterThanOrEqual(2);
		expect(await page.getByTestId('leak-notice').textContent()).toMatch(/not a safety system/);
		await screenshot(page, 'morning-3-wafer');

		const form = page.getByTestId('ack-form');
		alarmIds = (await form.locator('input[name=alarmId]').evaluateAll((els) => els.map((e) => Number((e as HTMLInputElement).value)))).filter(Boolean);
		expect(alarmIds.length).toBeGreaterThan(0);
		await form.locator('select[name=causeCode]').selectOption('HW-LEAK');
		await form.locator('input[name=disposition][value=hold_recommended]').check();
		await form.locator('textarea[name=comment]').fill('N2 bands rising wafer by wafer: door seal suspected. Leak check requested.');
		await form.getByRole('button', { name: /Acknowledge/ }).click();
		await expect.poll(() => page.getByTestId('wafer-ack-done').textContent()).toMatch(/acknowledged/);
		await screenshot(page, 'morning-4-acknowledged');

		await page.goto(`${base()}/alarms?chamber=${LEAK}&state=acknowledged`);
		const queue = await page.locator('main').textContent();
		expect(queue).toContain(LEAK);
		await page.goto(`${base()}/alarms/${alarmIds[0]}`);
		const detail = (await page.locator('main').textContent()) ?? '';
		expect(detail).toContain('HW-LEAK');
		expect(detail).toContain('door seal suspected');
		await screenshot(page, 'morning-5-audit');
		await ctx.close();
	});

	it('the audit trail holds one acknowledgement row per alarm, with the cause and disposition', async () => {
		expect(alarmIds.length).toBeGreaterThan(0);
		const cookie = await signIn('viewer');
		for (const id of alarmIds) {
			const r = await request(`/alarms/${id}`, { cookie });
			expect(r.status).toBe(200);
			const html = await r.text();
			expect(html).toContain('HW-LEAK');
		}
	});

	it('viewer: the wafer page has no acknowledge control, and a forged POST is refused', async () => {
		expect(waferPath).toMatch(/^\/wafers\/\d+$/);
		const ctx = await browser.newContext();
		const page = await ctx.newPage();
		await signInPage(page, base(), TEST_USERS.viewer, TEST_PASSWORD);
		await page.waitForURL(`${base()}/`);
		await page.goto(`${base()}${waferPath}`);
		await page.getByTestId('wafer-alarms').waitFor();
		expect(await page.getByTestId('ack-form').count()).toBe(0);
		await ctx.close();
		const cookie = await signIn('viewer');
		const forged = await request(`${waferPath}?/acknowledge`, {
			cookie,
			form: { alarmId: String(alarmIds[0]), causeCode: 'FA-LIMIT', disposition: 'continue', comment: 'forged' }
		});
		expect(forged.status).toBe(403);
		const after = await (await request(`/alarms/${alarmIds[0]}`, { cookie })).text();
		expect(after).not.toContain('forged');
	});
});
