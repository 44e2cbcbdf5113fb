/**
 * The module engineer's morning on the demo fab, end to end in Chromium: sign in → the fleet heatmap
 * flags the air-leak chamber → open it → open its worst wafer → the nitrogen bands lead the
 * contributions → acknowledge the alarm there with a cause code → the queue shows it acknowledged and
 * the audit trail has the entry → a viewer sees no acknowledge control, and a forged POST is refused.
 * The e2e files share one seeded database in no fixed order: when another file acknowledged the leak
 * alarms first, the wafer page shows who did, with which cause, instead of the form, and the test
 * checks that summary and the audit trail it points at.
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
/** the cause code each alarm was acknowledged with (by this test or by another file before it) */
const causes = new Map<number, string>();

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
		// The leak chamber stands out: open alarms on its row or, when another file acknowledged them
		// first (the heatmap counts open ones only), cells beyond the limit.
		await expect.poll(async () => (await row.getByText(/\d+ open/).count()) + (await row.locator('a[aria-label*="beyond limit"]').count())).toBeGreaterThan(0);
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
		const summary = page.getByTestId('wafer-ack-summary');
		const acks = page.getByTestId('wafer-alarm-ack');
		// Either open alarms (the form) or, when another file answered them first, the summary.
		await expect.poll(async () => (await form.count()) + (await summary.count()), { timeout: 10_000 }).toBeGreaterThan(0);
		const ackedHere = (await form.count()) > 0;
		if (ackedHere) {
			alarmIds = (await form.locator('input[name=alarmId]').evaluateAll((els) => els.map((e) => Number((e as HTMLInputElement).value)))).filter(Boolean);
			expect(alarmIds.length).toBeGreaterThan(0);
			await form.locator('select[name=causeCode]').selectOption('HW-LEAK');
			await form.locator('input[name=disposition][value=hold_recommended]').check();
			await form.locator('textarea[name=comment]').fill('N2 bands rising wafer by wafer: door seal suspected. Leak check requested.');
			await form.getByRole('button', { name: /Acknowledge/ }).click();
			await expect.poll(() => page.getByTestId('wafer-ack-done').textContent()).toMatch(/acknowledged/);
			// The form is gone (nothing open is left) and each alarm says who answered it, how and when.
			await expect.poll(() => summary.count()).toBe(1);
			expect(await form.count()).toBe(0);
			for (const id of alarmIds) {
				const ack = page.getByTestId(`wafer-alarm-${id}`).getByTestId('wafer-alarm-ack');
				expect(await ack.textContent()).toMatch(/Acknowledged by Test engineer.*HW-LEAK.*Hold recommended/s);
				causes.set(id, 'HW-LEAK');
			}
			await page.getByTestId('wafer-alarms').scrollIntoViewIfNeeded();
			await screenshot(page, 'morning-4-acknowledged');
		} else {
			const linked = await summary.locator('a[href^="/alarms/"]').evaluateAll((els) => els.map((e) => Number(e.getAttribute('href')!.split('/').pop())));
			alarmIds = linked.filter(Boolean);
			expect(alarmIds.length).toBeGreaterThan(0);
			for (const id of alarmIds) {
				const ack = page.getByTestId(`wafer-alarm-${id}`).getByTestId('wafer-alarm-ack');
				const code = (await ack.getAttribute('data-cause')) ?? '';
				expect(code).not.toBe('');
				const text = (await ack.textContent()) ?? '';
				expect(text).toContain('Acknowledged by');
				expect(text).toContain(code);
				causes.set(id, code);
			}
			expect(await acks.count()).toBeGreaterThanOrEqual(alarmIds.length);
			await page.getByTestId('wafer-alarms').scrollIntoViewIfNeeded();
			await screenshot(page, 'morning-4-already-acknowledged');
		}

		await page.goto(`${base()}/alarms?chamber=${LEAK}&state=acknowledged`);
		const queue = await page.locator('main').textContent();
		expect(queue).toContain(LEAK);
		await page.goto(`${base()}/alarms/${alarmIds[0]}`);
		const detail = (await page.locator('main').textContent()) ?? '';
		expect(detail).toContain(causes.get(alarmIds[0]));
		if (ackedHere) expect(detail).toContain('door seal suspected');
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
			expect(html).toContain(causes.get(id));
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
		// a viewer reads who acknowledged the leak alarms too
		expect(await page.getByTestId('wafer-alarm-ack').count()).toBeGreaterThanOrEqual(alarmIds.length);
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
