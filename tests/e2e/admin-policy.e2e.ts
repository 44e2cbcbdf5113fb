/** Admin policy and cause codes: validation with field errors, nothing half-written, admin only. */
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

describe('admin policy and cause codes', () => {
	it('refuses a bad alarm policy with the field marked and keeps what was typed', async () => {
		const ctx = await browser.newContext({ viewport: { width: 1280, height: 800 } });
		const page = await ctx.newPage();
		await signInTo(page, 'admin', `/admin/policy`);
		const form = page.getByTestId('alarm-policy');
		await form.getByLabel('k wafers').fill('9');
		await form.getByLabel('of the last m').fill('4');
		await form.getByRole('button', { name: 'Save alarm rules' }).click();
		await expect.poll(() => form.textContent()).toContain('k cannot be larger than m');
		expect(await form.getByLabel('k wafers').inputValue()).toBe('9');
		await form.getByLabel('λ (weight of the newest wafer)').fill('abc');
		await form.getByLabel('k wafers').fill('3');
		await form.getByLabel('of the last m').fill('5');
		await form.getByRole('button', { name: 'Save alarm rules' }).click();
		await expect.poll(() => form.getByLabel('λ (weight of the newest wafer)').getAttribute('aria-invalid')).toBe('true');
		await screenshot(page, 'admin-policy-error');
		await form.getByLabel('λ (weight of the newest wafer)').fill('0.2');
		await form.getByRole('button', { name: 'Save alarm rules' }).click();
		await expect.poll(() => form.textContent()).toContain('Alarm policy saved');
		await ctx.close();
	});

	it('adds, renames and retires a cause code', async () => {
		const ctx = await browser.newContext({ viewport: { width: 1280, height: 800 } });
		const page = await ctx.newPage();
		await signInTo(page, 'admin', `/admin/cause-codes`);
		const add = page.locator('form[action="?/add"]');
		await add.locator('input[name="code"]').fill('hw-pump');
		await add.locator('input[name="title"]').fill('Dry pump wearing out');
		await page.getByRole('button', { name: 'Add', exact: true }).click();
		await expect.poll(() => page.getByText('Choose a category.').count()).toBe(1);
		await add.locator('select[name="category"]').selectOption('hardware');
		await page.getByRole('button', { name: 'Add', exact: true }).click();
		const row = page.getByTestId('cause-HW-PUMP');
		await row.waitFor();
		await row.getByLabel('Title of HW-PUMP').fill('Dry pump degrading');
		await row.getByRole('button', { name: 'Save' }).click();
		await expect.poll(() => row.textContent()).toContain('Saved');
		await row.getByRole('button', { name: 'Retire' }).click();
		await expect.poll(() => row.textContent()).toContain('retired');
		await screenshot(page, 'admin-cause-codes');
		// Retired: not offered when acknowledging.
		const cookie = await signIn('engineer');
		const queue = await (await request('/alarms?state=open', { cookie })).text();
		const id = /data-testid="alarm-(\d+)"/.exec(queue)![1];
		const detail = await (await request(`/alarms/${id}`, { cookie })).text();
		expect(detail).toContain('value="HW-LEAK"');
		expect(detail).not.toContain('value="HW-PUMP"');
		await ctx.close();
	});

	it('is refused to an engineer', async () => {
		const cookie = await signIn('engineer');
		expect((await request('/admin/policy', { cookie })).status).toBe(403);
		expect((await request('/admin/cause-codes?/add', { cookie, form: { code: 'X', title: 'x', category: 'other' } })).status).toBe(403);
	});
});
