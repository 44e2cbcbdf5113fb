/**
 * The morning drill-down in a real browser on the demo fab: the fleet heatmap marks the air-leak
 * chamber, its page opens, its worst wafer names the nitrogen bands among the top contributors and
 * shows the safety reminder; the wafer table sorts and pages; the CSV export downloads the filtered
 * rows. Screenshots go to test-results/screens/ for a person to look at.
 */
import fs from 'node:fs';
import Papa from 'papaparse';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser, BrowserContext, Page } from 'playwright-core';
import { launch, screenshot, signInPage } from './browser.ts';
import { base, request, signIn } from './http.ts';
import { TEST_PASSWORD, TEST_USERS } from './global-setup.ts';
import { EPISODE_CHAMBERS } from '../../seeds/demo/fab.ts';

const LEAK = EPISODE_CHAMBERS.airLeak;
const N2_BANDS = ['337.1', '357.7', '380.5'];

let browser: Browser;
let ctx: BrowserContext;
let page: Page;
beforeAll(async () => {
	browser = await launch();
	ctx = await browser.newContext({ viewport: { width: 1280, height: 800 }, acceptDownloads: true });
	page = await ctx.newPage();
	await signInPage(page, base(), TEST_USERS.engineer, TEST_PASSWORD);
	await page.waitForURL(`${base()}/`);
});
afterAll(async () => {
	await ctx?.close();
	await browser?.close();
});

describe('fleet heatmap → chamber → wafer-step', () => {
	it('renders the heatmap from the API and marks the air-leak chamber', async () => {
		await page.goto(`${base()}/?window=7d`);
		const grid = page.getByTestId('heatmap');
		await grid.waitFor();
		await expect.poll(() => page.getByTestId('updated').textContent()).toMatch(/updated \d\d:\d\d:\d\d/);
		const row = page.getByRole('row').filter({ has: page.getByRole('rowheader').getByText(LEAK, { exact: true }) });
		// The leak chamber: open alarms on its row, and cells beyond the limit in the last days.
		expect(await row.getByText(/\d+ open/).textContent()).toMatch(/[1-9]\d* open/);
		const beyond = await row.locator('a[aria-label*="beyond limit"]').count();
		expect(beyond).toBeGreaterThan(0);
		await screenshot(page, 'screens-heatmap-7d');
		await row.locator('a[aria-label*="beyond limit"]').last().hover();
		await page.getByTestId('heat-tooltip').waitFor();
		expect(await page.getByTestId('heat-tooltip').textContent()).toContain('worst wafer');
		await screenshot(page, 'screens-heatmap-hover');
		await page.goto(`${base()}/`);
		await page.getByTestId('heatmap').waitFor();
		await screenshot(page, 'screens-heatmap-24h');
	});

	it('the heatmap API refuses a bad window and names the parameter', async () => {
		const cookie = await signIn('viewer');
		const r = await request('/api/heatmap?window=2h', { cookie });
		expect(r.status).toBe(400);
		expect((await r.json()).param).toBe('window');
	});

	it('opens the chamber from the heatmap, then its worst wafer: nitrogen bands lead and the safety reminder shows', async () => {
		await page.goto(`${base()}/?window=7d`);
		const row = page.getByRole('row').filter({ has: page.getByRole('rowheader').getByText(LEAK, { exact: true }) });
		await row.locator('a[aria-label*="beyond limit"]').last().click();
		await page.waitForURL(new RegExp(`/chambers/${LEAK}\\?`));
		await page.getByTestId('chamber-chart').waitFor();
		await page.waitForTimeout(400);
		await screenshot(page, 'screens-chamber');
		// Sort the table by state (worst ratio), worst first, and open the top wafer.
		const table = page.getByTestId('wafer-table');
		await table.getByRole('button', { name: /State/ }).click();
		await expect.poll(() => table.locator('th[aria-sort]').getAttribute('aria-sort')).toBe('descending');
		await table.locator('tbody tr a').first().click();
		await page.waitForURL(/\/wafers\/\d+/);
		const top = await page.getByTestId('contributors').textContent();
		expect(N2_BANDS.filter((b) => top!.includes(b)).length).toBeGreaterThanOrEqual(2);
		expect(top).toContain('N₂');
		expect(top).not.toMatch(/N2 /);
		expect(await page.getByTestId('leak-notice').textContent()).toMatch(/not a safety system/);
		await expect.poll(() => page.getByTestId('contrib-chart').locator('canvas').count()).toBeGreaterThan(0);
		await screenshot(page, 'screens-wafer');
		await page.mouse.wheel(0, 900);
		await page.waitForTimeout(200);
		await screenshot(page, 'screens-wafer-lower');
	});

	it('the wafer API answers with the statistics and contributions', async () => {
		const cookie = await signIn('viewer');
		const id = new URL(page.url()).pathname.split('/').pop();
		const r = await request(`/api/wafers/${id}?contrib=complete`, { cookie });
		expect(r.status).toBe(200);
		const v = await r.json();
		expect(v.contributions.kind).toBe('complete');
		expect(v.stats.q).toBeGreaterThan(0);
		expect((await request('/api/wafers/abc', { cookie })).status).toBe(400);
		expect((await request('/api/wafers/99999999', { cookie })).status).toBe(404);
	});
});

describe('wafer table', () => {
	it('sorts by a column on the server and pages', async () => {
		await page.goto(`${base()}/chambers/${LEAK}?from=${encodeURIComponent(new Date(Date.now() - 40 * 86_400_000).toISOString())}`);
		const table = page.getByTestId('wafer-table');
		await table.locator('tbody tr a').first().waitFor();
		await table.getByRole('button', { name: /Wafer/ }).click();
		await expect.poll(() => table.locator('th[aria-sort]').textContent()).toContain('Wafer');
		await expect.poll(() => table.locator('th[aria-sort]').getAttribute('aria-sort')).toBe('ascending');
		await page.waitForTimeout(300);
		const ids = await table.locator('tbody tr td:nth-child(2) a').allTextContents();
		expect(ids.length).toBe(25);
		expect([...ids].sort()).toEqual(ids);
		await table.getByRole('button', { name: 'Next' }).click();
		await expect.poll(() => table.getByTestId('page-indicator').textContent()).toMatch(/^page 2 of/);
		await page.waitForTimeout(300);
		const next = await table.locator('tbody tr td:nth-child(2) a').allTextContents();
		expect(next[0] >= ids[ids.length - 1]).toBe(true);
		await screenshot(page, 'screens-wafer-table');
	});

	it('exports the filtered rows as a CSV download', async () => {
		const table = page.getByTestId('wafer-table');
		await table.getByLabel('Filter by state').selectOption('beyond');
		await expect.poll(async () => (await table.locator('tbody tr').first().textContent()) ?? '').toContain('beyond limit');
		const total = Number(((await table.locator('[aria-live="polite"]').textContent()) ?? '').replace(/[^\d]/g, ''));
		expect(total).toBeGreaterThan(0);
		const [download] = await Promise.all([page.waitForEvent('download'), table.getByTestId('csv-export').click()]);
		expect(download.suggestedFilename()).toMatch(new RegExp(`^${LEAK}-wafers-.*\\.csv$`));
		const file = await download.path();
		const rows = Papa.parse<Record<string, string>>(fs.readFileSync(file, 'utf8'), { header: true, skipEmptyLines: true }).data;
		expect(rows.length).toBe(total);
		expect(rows.every((r) => r.state === 'beyond' && r.chamber === LEAK)).toBe(true);
	});
});

describe('themes and sizes', () => {
	it('draws the heatmap in the light theme and on a 4K screen', async () => {
		const big = await browser.newContext({ viewport: { width: 3840, height: 2160 } });
		const p = await big.newPage();
		await signInPage(p, base(), TEST_USERS.viewer, TEST_PASSWORD);
		await p.waitForURL(`${base()}/`);
		await p.getByTestId('heatmap').waitFor();
		await screenshot(p, 'screens-heatmap-4k');
		await p.getByTestId('theme-toggle').click();
		await p.waitForTimeout(300);
		await screenshot(p, 'screens-heatmap-4k-light');
		await p.goto(`${base()}/chambers/${LEAK}`);
		await p.getByTestId('chamber-chart').waitFor();
		await p.waitForTimeout(400);
		await screenshot(p, 'screens-chamber-4k-light');
		await big.close();
	});
});
