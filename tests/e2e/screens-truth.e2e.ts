/**
 * Screens that read right at a glance, in Chromium on the demo fab, as a demo engineer (whose account
 * zone is the plant's, Europe/Vienna):
 * - the fleet heatmap's colours only get stronger with severity, in both themes (the air-leak chamber
 *   far beyond its limit is drawn stronger than a chamber just beyond its own);
 * - one clock: the same instant reads the same on two pages, in the plant's zone and after switching to
 *   UTC, and every page (alarm queue, maintenance, baselines) follows the switch and names the zone;
 * - the chamber's name on the fleet map opens its usual range, a cell zooms to its period;
 * - an unknown address answers Lockstep's own error page, without a stack trace.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser, BrowserContext, Page } from 'playwright-core';
import { launch, screenshot, signInPage } from './browser.ts';
import { base } from './http.ts';
import { EPISODE_CHAMBERS } from '../../seeds/demo/fab.ts';

const DEMO_ENGINEER = 'dokafor'; // seeds/demo: an engineer in the plant's zone
const DEMO_PASSWORD = 'lockstep-demo';
const LEAK = EPISODE_CHAMBERS.airLeak;

// CIELAB (CIE 15:2004, D65) from sRGB (IEC 61966-2-1): the colour difference of a cell from its panel.
type Vec3 = [number, number, number];
function lab(rgb: Vec3): Vec3 {
	const [r, g, b] = rgb.map((v) => {
		const c = v / 255;
		return c <= 0.04045 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4;
	});
	const f = (t: number) => (t > (24 / 116) ** 3 ? Math.cbrt(t) : (841 / 108) * t + 16 / 116);
	const X = f((0.4124 * r + 0.3576 * g + 0.1805 * b) / 0.95047);
	const Y = f(0.2126 * r + 0.7152 * g + 0.0722 * b);
	const Z = f((0.0193 * r + 0.1192 * g + 0.9505 * b) / 1.08883);
	return [116 * Y - 16, 500 * (X - Y), 200 * (Y - Z)];
}
const parseColour = (s: string): Vec3 => {
	const hex = /^#([0-9a-f]{6})$/i.exec(s.trim());
	if (hex) return [0, 2, 4].map((i) => parseInt(hex[1].slice(i, i + 2), 16)) as Vec3;
	const m = /rgba?\((\d+),\s*(\d+),\s*(\d+)/.exec(s);
	if (!m) throw new Error(`not a colour: ${s}`);
	return [Number(m[1]), Number(m[2]), Number(m[3])];
};
const deltaE = (p: Vec3, q: Vec3) => {
	const [a, b] = [lab(p), lab(q)];
	return Math.hypot(a[0] - b[0], a[1] - b[1], a[2] - b[2]);
};

let browser: Browser;
let ctx: BrowserContext;
let page: Page;
beforeAll(async () => {
	browser = await launch();
	ctx = await browser.newContext({ viewport: { width: 1280, height: 800 } });
	page = await ctx.newPage();
	await signInPage(page, base(), DEMO_ENGINEER, DEMO_PASSWORD);
	await page.waitForURL(`${base()}/`);
});
afterAll(async () => {
	await ctx?.close();
	await browser?.close();
});

async function setTheme(theme: 'dark' | 'light') {
	const u = new URL(base());
	await ctx.addCookies([{ name: 'ls_theme', value: theme, domain: u.hostname, path: '/' }]);
}

describe('severity reads right on the fleet map', () => {
	it.each(['dark', 'light'] as const)('colours only get stronger with the ratio to the limit (%s theme)', async (theme) => {
		await setTheme(theme);
		await page.goto(`${base()}/?window=7d`);
		await page.getByTestId('heatmap').waitFor();
		await expect.poll(() => page.getByTestId('updated').textContent()).toMatch(/updated \d\d:\d\d:\d\d/);
		expect(await page.evaluate(() => document.documentElement.dataset.theme)).toBe(theme);
		const { panel, cells } = await page.evaluate(() => ({
			// the panel colour as the browser resolves it (the built CSS may shorten #ffffff to #fff)
			panel: (() => {
				const probe = document.createElement('div');
				probe.style.background = 'var(--ls-surface-1)';
				document.body.append(probe);
				const c = getComputedStyle(probe).backgroundColor;
				probe.remove();
				return c;
			})(),
			cells: [...document.querySelectorAll<HTMLElement>('[data-testid="heatmap"] a[data-cell]')].map((a) => ({
				label: a.getAttribute('aria-label') ?? '',
				colour: getComputedStyle(a).backgroundColor
			}))
		}));
		const P = parseColour(panel);
		const scored = cells
			.map((c) => {
				const m = /worst ([\d,.]+)× of limit/.exec(c.label);
				return m ? { code: c.label.split(',')[0], r: Math.min(3, Number(m[1].replace(/,/g, ''))), strength: deltaE(parseColour(c.colour), P) } : null;
			})
			.filter((x): x is { code: string; r: number; strength: number } => x !== null)
			.sort((a, b) => a.r - b.r);
		// The demo must hold both ends for this to mean anything: quiet cells, cells just beyond, and the leak far beyond.
		expect(scored.filter((s) => s.r < 1).length).toBeGreaterThan(50);
		const justBeyond = scored.filter((s) => s.r > 1 && s.r < 1.5);
		const farBeyond = scored.filter((s) => s.r >= 3 && s.code === LEAK);
		expect(justBeyond.length).toBeGreaterThan(0);
		expect(farBeyond.length).toBeGreaterThan(0);
		// Strength never falls as the ratio rises (0.1 apart, beyond 8-bit rounding).
		let worstInversion = 0;
		for (let i = 0; i < scored.length; i++)
			for (let j = i + 1; j < scored.length; j++) if (scored[j].r - scored[i].r > 0.1) worstInversion = Math.max(worstInversion, scored[i].strength - scored[j].strength);
		expect(worstInversion).toBeLessThan(0.6);
		const strongestJust = Math.max(...justBeyond.map((s) => s.strength));
		expect(Math.min(...farBeyond.map((s) => s.strength))).toBeGreaterThan(strongestJust + 5);
		await screenshot(page, `truth-heatmap-7d-${theme}`);
	});
});

describe('one clock on every page', () => {
	/** The approval time of the first active baseline on the list, then the same instant on its own page. */
	async function approvalOnTwoPages(): Promise<{ list: string; own: string; instant: string }> {
		await page.goto(`${base()}/baselines`);
		const row = page.locator('tr[data-testid^="pair-"]').filter({ has: page.locator('td:nth-child(11) time') }).first();
		const time = row.locator('td:nth-child(11) time');
		const instant = (await time.getAttribute('datetime'))!;
		const list = (await time.textContent())!.trim();
		await row.locator('a').first().click();
		await page.waitForURL(/\/baselines\/[^/]+\/\d+/);
		const own = (await page.locator(`time[datetime="${instant}"]`).first().textContent())!.trim();
		return { list, own, instant };
	}

	it('shows the same time on two pages in the plant zone and in UTC, with the zone named', async () => {
		await setTheme('dark');
		const local = await approvalOnTwoPages();
		expect(local.own).toBe(local.list);
		expect(local.list).toMatch(/^\d{4}-\d\d-\d\d \d\d:\d\d\s*(CET|CEST)$/);

		await page.getByRole('radio', { name: 'UTC' }).click();
		await expect.poll(() => page.getByRole('radio', { name: 'UTC' }).getAttribute('aria-checked')).toBe('true');
		const utc = await approvalOnTwoPages();
		expect(utc.instant).toBe(local.instant);
		expect(utc.own).toBe(utc.list);
		expect(utc.list).toMatch(/^\d{4}-\d\d-\d\d \d\d:\d\d\s*UTC$/);
		// the same instant, one or two hours apart on the wall clock (Vienna is UTC+1 or +2)
		const wall = (s: string) => Date.parse(`${s.slice(0, 16).replace(' ', 'T')}:00Z`);
		expect([3_600_000, 7_200_000]).toContain(wall(local.list) - wall(utc.list));
		expect(wall(utc.list)).toBe(Math.floor(Date.parse(utc.instant) / 60_000) * 60_000);
	});

	it('every list page follows the switch (alarm queue, maintenance) and goes back', async () => {
		for (const path of ['/alarms', '/maintenance']) {
			await page.goto(`${base()}${path}`);
			const times = await page.locator('main time').allTextContents();
			expect(times.length, path).toBeGreaterThan(0);
			for (const t of times.slice(0, 20)) expect(t, path).toMatch(/UTC$/);
		}
		await page.getByRole('radio', { name: 'Europe/Vienna' }).click();
		await expect.poll(() => page.getByRole('radio', { name: 'Europe/Vienna' }).getAttribute('aria-checked')).toBe('true');
		await page.goto(`${base()}/alarms`);
		for (const t of (await page.locator('main time').allTextContents()).slice(0, 20)) expect(t).toMatch(/CES?T$/);
		// no raw ISO instants in the rows
		expect(await page.locator('main').textContent()).not.toMatch(/\d{4}-\d\d-\d\dT\d\d:\d\d/);
	});
});

describe('fleet map links', () => {
	it("a chamber's name opens its usual range; a cell zooms to its period", async () => {
		await page.goto(`${base()}/?window=7d`);
		await page.getByTestId('heatmap').waitFor();
		const name = page.getByTestId('heat-row-link').filter({ hasText: LEAK });
		expect(await name.getAttribute('href')).toBe(`/chambers/${LEAK}`);
		await name.click();
		await page.waitForURL(new RegExp(`/chambers/${LEAK}$`));
		await page.getByTestId('wafer-table').locator('tbody tr a').first().waitFor();
		expect(await page.getByText(/shaded: .* from the fleet map/).count()).toBe(0);
		await page.goto(`${base()}/?window=7d`);
		const cell = page.getByRole('row').filter({ has: page.getByRole('rowheader').getByText(LEAK, { exact: true }) }).locator('a[data-cell]').last();
		expect(await cell.getAttribute('href')).toMatch(/[?&]at=.*&until=/);
	});
});

describe('errors', () => {
	it('an unknown address answers a Lockstep page with no stack trace', async () => {
		const r = await page.goto(`${base()}/no-such-page-here`);
		expect(r?.status()).toBe(404);
		await page.getByTestId('error-page').waitFor();
		const text = (await page.getByTestId('error-page').textContent()) ?? '';
		expect(text).toContain('error 404');
		expect(text).not.toMatch(/at .*\.(js|ts):\d+|node_modules/);
		await screenshot(page, 'truth-error-404');
	});
});
