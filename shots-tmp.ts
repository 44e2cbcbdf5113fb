// Temporary screenshot driver (not committed): signs in and saves the fleet, wafer and landing screens.
import { chromium } from 'playwright-core';
const [base, user, pass, out, ...paths] = process.argv.slice(2);
const browser = await chromium.launch({ executablePath: '/usr/bin/chromium', headless: true, args: ['--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'] });
for (const theme of ['light', 'dark']) for (const [w, h] of [[1280, 800], [1920, 1200]]) {
	const ctx = await browser.newContext({ viewport: { width: w, height: h } });
	await ctx.addCookies([{ name: 'ls_theme', value: theme, url: base }]);
	const page = await ctx.newPage();
	await page.goto(`${base}/sign-in`);
	await page.getByLabel('User name').fill(user);
	await page.getByLabel('Password').fill(pass);
	await page.getByRole('button', { name: 'Sign in' }).click();
	await page.waitForLoadState('networkidle');
	for (const [i, p] of paths.entries()) {
		await page.goto(`${base}${p}`);
		await page.waitForLoadState('networkidle');
		await page.waitForTimeout(800);
		await page.screenshot({ path: `${out}-${i}-${theme}-${w}.png`, fullPage: p.includes('full=1') });
	}
	await ctx.close();
}
await browser.close();
