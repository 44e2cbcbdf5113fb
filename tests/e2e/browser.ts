/** Debian's Chromium driven by playwright-core: a fresh profile per launch, no network but loopback. */
import fs from 'node:fs';
import path from 'node:path';
import { chromium, type Browser, type Page } from 'playwright-core';
import { TEST_PASSWORD, TEST_USERS } from './global-setup.ts';
import { base } from './http.ts';

export const SCREEN_DIR = path.resolve('test-results/screens');

export async function launch(): Promise<Browser> {
	return chromium.launch({
		executablePath: process.env.CHROMIUM_PATH ?? '/usr/bin/chromium',
		headless: true,
		args: [
			'--no-sandbox',
			'--disable-gpu',
			'--disable-quic',
			'--no-first-run',
			'--disable-background-networking',
			'--disable-component-update',
			'--disable-sync'
		]
	});
}

/** Save a screenshot (not committed) for a person to look at after the run. */
export async function screenshot(page: Page, name: string): Promise<string> {
	fs.mkdirSync(SCREEN_DIR, { recursive: true });
	const file = path.join(SCREEN_DIR, `${name}.png`);
	await page.screenshot({ path: file, fullPage: false });
	return file;
}

export async function signInPage(page: Page, base: string, username: string, password: string) {
	await page.goto(`${base}/sign-in`);
	await page.getByLabel('User name').fill(username);
	await page.getByLabel('Password').fill(password);
	await page.getByRole('button', { name: 'Sign in' }).click();
}

/** Sign in through the form as a test user, asking for `path` so the landing page is not loaded first. */
export async function signInTo(page: Page, who: keyof typeof TEST_USERS, path: string) {
	await page.goto(`${base()}/sign-in?next=${encodeURIComponent(path)}`);
	await page.getByLabel('User name').fill(TEST_USERS[who]);
	await page.getByLabel('Password').fill(TEST_PASSWORD);
	await page.getByRole('button', { name: 'Sign in' }).click();
	await page.waitForURL((u) => u.pathname === path.split('?')[0]);
	if (!page.url().endsWith(path)) await page.goto(`${base()}${path}`);
}
