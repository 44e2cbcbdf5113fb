import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser } from 'playwright-core';
import { launch, screenshot, signInPage } from './browser.ts';
import { base } from './http.ts';
import { TEST_PASSWORD, TEST_USERS } from './global-setup.ts';

let browser: Browser;
beforeAll(async () => {
	browser = await launch();
});
afterAll(async () => {
	await browser?.close();
});

describe('sign-in in the browser', () => {
	for (const role of ['viewer', 'engineer', 'admin'] as const) {
		it(`signs in as ${role}, shows the role in the top bar, and signs out`, async () => {
			const ctx = await browser.newContext({ viewport: { width: 1280, height: 800 } });
			const page = await ctx.newPage();
			await signInPage(page, base(), TEST_USERS[role], TEST_PASSWORD);
			await page.waitForURL(`${base()}/`);
			const who = page.getByTestId('whoami');
			await expect.poll(() => who.textContent()).toContain(role);
			const nav = await page.getByRole('navigation', { name: 'Sections' }).textContent();
			if (role === 'admin') expect(nav).toContain('People');
			else expect(nav).not.toContain('People');
			// viewers reach feature-set changes from the bar; engineers and admins through Uploads
			if (role === 'viewer') expect(nav).toMatch(/Feature sets/);
			else expect(nav).toMatch(/Uploads/);
			if (role !== 'viewer') expect(nav).not.toMatch(/Feature sets/);
			await screenshot(page, `shell-${role}`);
			await page.getByRole('button', { name: 'Sign out' }).click();
			await page.waitForURL(`${base()}/sign-in`);
			await page.goto(`${base()}/`);
			expect(new URL(page.url()).pathname).toBe('/sign-in');
			await ctx.close();
		});
	}

	it('shows one generic message for a wrong password and stays on the form', async () => {
		const ctx = await browser.newContext();
		const page = await ctx.newPage();
		await signInPage(page, base(), TEST_USERS.engineer, 'wrong-password-here');
		await expect.poll(() => page.getByTestId('sign-in-error').textContent()).toContain('do not match an active account');
		expect(new URL(page.url()).pathname).toBe('/sign-in');
		await screenshot(page, 'sign-in-error');
		await ctx.close();
	});

	it('returns to the page asked for after signing in', async () => {
		const ctx = await browser.newContext();
		const page = await ctx.newPage();
		await page.goto(`${base()}/account`);
		expect(new URL(page.url()).pathname).toBe('/sign-in');
		await page.getByLabel('User name').fill(TEST_USERS.viewer);
		await page.getByLabel('Password').fill(TEST_PASSWORD);
		await page.getByRole('button', { name: 'Sign in' }).click();
		await page.waitForURL(`${base()}/account`);
		await ctx.close();
	});
});
