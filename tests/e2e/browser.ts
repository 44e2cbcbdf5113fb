/** Debian's Chromium driven by playwright-core: a fresh profile per launch, no network but loopback. */
import fs from 'node:fs';
import path from 'node:path';
import { chromium, type Browser, type Page } from 'playwright-core';

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
