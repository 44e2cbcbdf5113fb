/**
 * The alarm queue on the demo fab: an engineer acknowledges an alarm with a cause code from the queue
 * and finds the entry in its audit trail; a viewer sees no controls and a forged POST is refused.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser } from 'playwright-core';
import { launch, screenshot, signInTo } from './browser.ts';
import { base, request, signIn } from './http.ts';
import { TEST_PASSWORD, TEST_USERS } from './global-setup.ts';

let browser: Browser;
beforeAll(async () => {
	browser = await launch();
});
afterAll(async () => {
	await browser?.close();
});

async function openAlarmIds(cookie: string): Promise<number[]> {
	const html = await (await request('/alarms?state=open', { cookie })).text();
	return [...html.matchAll(/data-testid="alarm-(\d+)"/g)].map((m) => Number(m[1]));
}

describe('alarm queue', () => {
	it('acknowledges an alarm with a cause code from the queue; the audit entry exists', async () => {
		const ctx = await browser.newContext({ viewport: { width: 1280, height: 800 } });
		const page = await ctx.newPage();
		await signInTo(page, 'engineer', `/alarms?state=open`);
		await screenshot(page, 'queue-open');
		const row = page.locator('tbody tr[data-testid^="alarm-"]').first();
		const id = Number((await row.getAttribute('data-testid'))!.slice('alarm-'.length));
		await row.getByRole('button', { name: `Acknowledge alarm #${id}` }).click();
		const form = page.getByTestId('ack-form');
		// Submitting without a cause keeps the panel open with the field error, nothing written.
		await form.getByRole('button', { name: 'Acknowledge alarm' }).click();
		await expect.poll(() => form.textContent()).toContain('Choose a cause code from the list.');
		await form.locator('select[name="causeCode"]').selectOption('HW-LEAK');
		await form.getByLabel(/Hold recommended/).check();
		await form.getByLabel('Comment').fill('Checked the door seal <b>bold?</b>');
		await screenshot(page, 'queue-ack-panel');
		await form.getByRole('button', { name: 'Acknowledge alarm' }).click();
		await expect.poll(() => page.getByTestId('flash').textContent()).toContain(`Alarm #${id} acknowledged`);
		// The open filter no longer lists it; the live view shows it acknowledged with its cause.
		await page.goto(`${base()}/alarms?state=acknowledged`);
		const ackRow = page.getByTestId(`alarm-${id}`);
		await expect.poll(() => ackRow.textContent()).toContain('acknowledged');
		expect(await ackRow.textContent()).toContain('HW-LEAK');
		await page.goto(`${base()}/alarms/${id}`);
		const entry = page.getByTestId('audit-acknowledged').last();
		expect(await entry.textContent()).toContain('HW-LEAK');
		expect(await entry.textContent()).toContain('Hold recommended');
		expect(await entry.textContent()).toContain('Test engineer');
		// The comment is shown as text, not markup.
		expect(await entry.textContent()).toContain('<b>bold?</b>');
		expect(await entry.locator('b').count()).toBe(0);
		await screenshot(page, 'alarm-detail');
		await ctx.close();
	});

	it('acknowledges a selected run of alarms together, all or nothing', async () => {
		const cookie = await signIn('engineer');
		const ids = (await openAlarmIds(cookie)).slice(0, 2);
		expect(ids.length).toBe(2);
		const refused = await request('/alarms?/acknowledge', { cookie, form: { alarmId: String(ids[0]), causeCode: 'NOT-A-CODE', disposition: 'continue', comment: '' } });
		expect(refused.status).toBe(400);
		const body = new URLSearchParams();
		for (const id of [...ids, 999999]) body.append('alarmId', String(id));
		body.set('causeCode', 'FA-LIMIT');
		body.set('disposition', 'continue');
		const partial = await fetch(`${base()}/alarms?/acknowledge`, { method: 'POST', headers: { cookie, origin: base(), 'content-type': 'application/x-www-form-urlencoded', accept: 'text/html' }, body, redirect: 'manual' });
		expect(partial.status).toBe(400);
		expect(await openAlarmIds(cookie)).toEqual(expect.arrayContaining(ids)); // nothing acknowledged
		body.delete('alarmId');
		for (const id of ids) body.append('alarmId', String(id));
		const ok = await fetch(`${base()}/alarms?/acknowledge`, { method: 'POST', headers: { cookie, origin: base(), 'content-type': 'application/x-www-form-urlencoded', accept: 'text/html' }, body, redirect: 'manual' });
		expect(ok.status).toBe(200);
		const left = await openAlarmIds(cookie);
		for (const id of ids) expect(left).not.toContain(id);
	});

	it('shows a viewer no acknowledge control and refuses a forged POST', async () => {
		const ctx = await browser.newContext({ viewport: { width: 1280, height: 800 } });
		const page = await ctx.newPage();
		await signInTo(page, 'viewer', `/alarms?state=open`);
		await page.getByTestId('alarm-table').waitFor();
		expect(await page.getByRole('button', { name: /Acknowledge/ }).count()).toBe(0);
		expect(await page.locator('input[type="checkbox"]').count()).toBe(0);
		await screenshot(page, 'queue-viewer');
		const cookie = await signIn('viewer');
		const [id] = await openAlarmIds(cookie);
		const forged = await request('/alarms?/acknowledge', { cookie, form: { alarmId: String(id), causeCode: 'HW-LEAK', disposition: 'continue', comment: 'forged' } });
		expect(forged.status).toBe(403);
		const detail = await request(`/alarms/${id}?/close`, { cookie, form: { alarmId: String(id) } });
		expect(detail.status).toBe(403);
		expect(await openAlarmIds(cookie)).toContain(id);
		await ctx.close();
	});

	it('shows the cause Pareto and the time to acknowledge per area', async () => {
		const ctx = await browser.newContext({ viewport: { width: 1280, height: 800 } });
		const page = await ctx.newPage();
		await signInTo(page, 'viewer', `/alarms?period=30d`);
		const tta = page.getByTestId('tta-table');
		await tta.scrollIntoViewIfNeeded();
		expect(await tta.locator('tbody tr').count()).toBeGreaterThan(0);
		expect(await tta.textContent()).toMatch(/\d+ (min|h|d)/);
		await page.locator('[role="img"][aria-label^="Acknowledgements per cause code"] canvas').first().waitFor();
		await screenshot(page, 'queue-analytics');
		await ctx.close();
	});
});

describe('background task API', () => {
	it('needs a session and answers 404 for a task this process does not know', async () => {
		expect((await request('/api/tasks/nope')).status).toBe(401);
		const r = await request('/api/tasks/nope', { cookie: await signIn('viewer') });
		expect(r.status).toBe(404);
		expect((await r.json()).error).toMatch(/No task/);
	});
});
