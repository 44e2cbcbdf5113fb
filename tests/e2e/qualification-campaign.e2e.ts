/**
 * A qualification campaign in the browser: an engineer drafts the baselines of two new chambers
 * (generated wafers, not the demo's, with one planted excursion), the review table shows the wafer
 * the screening left out and why, a second engineer approves all (four-eyes), and the golden wafers
 * are rescored. The generated area, chambers and recipe are removed afterwards so other files see the
 * demo unchanged.
 */
import path from 'node:path';
import type { Knex } from 'knex';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import type { Browser } from 'playwright-core';
import { openDb } from '../../src/lib/server/db.ts';
import { insertWaferSteps, latentRows } from '../helpers/fab.ts';
import { launch, screenshot, signInTo } from './browser.ts';
import { base, request, signIn } from './http.ts';

const P = 30;
// golden wafers sampled from production, one every 10 minutes: 60 span 10 h (no short-span warning)
const EVERY = 10 * 60_000;
const OUTLIER = 'QE2-A-L1-4';
let k: Knex;
let browser: Browser;
let admin: string;
const ids = { area: 0, tool: 0, recipe: 0, step: 0, chambers: [] as number[] };
const idOf = (r: unknown) => (typeof r === 'object' && r !== null ? (r as { id: number }).id : (r as number));

async function setFourEyes(on: boolean) {
	const form = new URLSearchParams({ seasoningWafers: '30', alpha: '0.01', warningAlpha: '0.05', requalifyOn: 'wet_clean' });
	if (on) form.set('fourEyes', 'on');
	form.append('requalifyOn', 'part_swap');
	const r = await fetch(`${base()}/admin/policy?/baseline`, { method: 'POST', headers: { cookie: admin, origin: base(), 'content-type': 'application/x-www-form-urlencoded', accept: 'text/html' }, body: form, redirect: 'manual' });
	expect(r.status).toBe(200);
}

beforeAll(async () => {
	k = openDb({ client: 'better-sqlite3', filename: path.join(inject('dataDir'), 'lockstep.sqlite'), connectionString: null });
	ids.area = idOf((await k('areas').insert({ code: 'QE2', name: 'Qualification test area' }).returning('id'))[0]);
	ids.tool = idOf((await k('tools').insert({ code: 'QE2-T', name: 'Qualification test tool', area_id: ids.area }).returning('id'))[0]);
	ids.recipe = idOf((await k('recipes').insert({ code: 'QE2R', name: 'Qualification test recipe' }).returning('id'))[0]);
	ids.step = idOf((await k('recipe_steps').insert({ recipe_id: ids.recipe, name: 'main', position: 1 }).returning('id'))[0]);
	await k('features').insert(Array.from({ length: P }, (_, j) => ({ recipe_step_id: ids.step, set_version: 1, position: j, name: `qe2_f${j}`, kind: 'sensor', unit: 'a.u.' })));
	const start = Date.now() - 2 * 86_400_000;
	for (const [i, code] of ['QE2-A', 'QE2-B'].entries()) {
		const ch = idOf((await k('chambers').insert({ code, name: code, tool_id: ids.tool, created_at: start }).returning('id'))[0]);
		ids.chambers.push(ch);
		for (let l = 0; l < 3; l++) {
			const rows = latentRows(20, P, 500 + 10 * i + l);
			if (`${code}-L${l}-4` === OUTLIER) rows[4][7] += 3; // 30× the noise on one feature
			await insertWaferSteps(k, { chamberId: ch, recipeStepId: ids.step, rows, start: start + l * 20 * EVERY, everyMs: EVERY, prefix: `${code}-L${l}` });
		}
	}
	browser = await launch();
	admin = await signIn('admin');
	await setFourEyes(true);
});

afterAll(async () => {
	await setFourEyes(false).catch(() => undefined);
	await browser?.close();
	if (!k) return;
	const ws = k('wafer_steps').whereIn('chamber_id', ids.chambers).select('id');
	const camp = k('qualification_drafts').whereIn('chamber_id', ids.chambers).select('campaign_id');
	await k('qualification_campaigns').whereIn('id', camp).delete();
	await k('qualification_drafts').whereIn('chamber_id', ids.chambers).delete();
	for (const t of ['alarm_actions']) await k(t).whereIn('alarm_id', k('alarms').whereIn('chamber_id', ids.chambers).select('id')).delete().catch(() => undefined);
	await k('alarms').whereIn('chamber_id', ids.chambers).delete();
	await k('scores').whereIn('wafer_step_id', ws).delete();
	await k('hourly_rollups').whereIn('chamber_id', ids.chambers).delete();
	await k('baseline_training_wafers').whereIn('wafer_step_id', ws).delete();
	await k('baselines').where({ recipe_step_id: ids.step }).delete();
	await k('fleet_matches').where({ recipe_step_id: ids.step }).delete().catch(() => undefined);
	await k('wafer_steps').whereIn('chamber_id', ids.chambers).delete();
	await k('features').where({ recipe_step_id: ids.step }).delete();
	await k('recipe_steps').where({ id: ids.step }).delete();
	await k('recipes').where({ id: ids.recipe }).delete();
	await k('chambers').whereIn('id', ids.chambers).delete();
	await k('tools').where({ id: ids.tool }).delete();
	await k('areas').where({ id: ids.area }).delete();
	await k.destroy();
});

describe('a qualification campaign in the browser', () => {
	let campaignPath = '';

	it('refuses a bad API request with the field named', async () => {
		const cookie = await signIn('engineer');
		const r = await fetch(`${base()}/api/qualifications`, { method: 'POST', headers: { cookie, origin: base(), 'content-type': 'application/json' }, body: JSON.stringify({ recipe: 'QE2R', step: 'main', golden: { afterWetClean: { count: 3 } } }) });
		expect(r.status).toBe(400);
		expect(await r.json()).toMatchObject({ field: 'golden.afterWetClean.count' });
		const viewer = await request('/api/qualifications', { method: 'POST', cookie: await signIn('viewer'), headers: { 'content-type': 'application/json', origin: base() } });
		expect(viewer.status).toBe(403);
	});

	it('drafts both chambers from the form and shows the screened-out wafer in the review table', async () => {
		const ctx = await browser.newContext({ viewport: { width: 1280, height: 800 } });
		const page = await ctx.newPage();
		await signInTo(page, 'engineer', '/qualifications');
		const formEl = page.getByTestId('campaign-form');
		await formEl.getByLabel('Recipe').selectOption('QE2R');
		await formEl.getByLabel('an area').check();
		await formEl.getByLabel('Area', { exact: true }).selectOption('QE2');
		await formEl.getByLabel('a time range').check();
		const from = new Date(Date.now() - 4 * 86_400_000).toISOString().slice(0, 16);
		const to = new Date().toISOString().slice(0, 16);
		await formEl.getByLabel(/^From/).fill(from);
		await formEl.getByLabel(/^To/).fill(to);
		await screenshot(page, 'qualification-new-1280');
		await formEl.getByRole('button', { name: 'Draft the baselines' }).click();
		await page.waitForURL(/\/qualifications\/\d+$/);
		campaignPath = new URL(page.url()).pathname;
		await expect.poll(() => page.getByTestId('campaign-state').textContent(), { timeout: 30_000 }).toContain('awaiting approval');
		const rowA = page.getByTestId('draft-QE2-A-main');
		await expect.poll(() => rowA.textContent()).toContain('draft');
		await rowA.getByText(/^\d+ wafers?$/).click();
		expect(await page.getByTestId('screened-QE2-A-main').textContent()).toContain(OUTLIER);
		expect(await page.getByTestId('screened-QE2-A-main').textContent()).toMatch(/qe2_f7/);
		expect(await page.getByTestId('draft-QE2-B-main').textContent()).toContain('draft');
		// four-eyes: the engineer who started it is told and cannot approve
		expect(await page.getByText('a second engineer approves this campaign').count()).toBe(1);
		await screenshot(page, 'qualification-review-1280');
		// the API answers the same review
		const api = await (await fetch(`${base()}/api/qualifications/${campaignPath.split('/').pop()}`, { headers: { cookie: await signIn('viewer') } })).json();
		expect(api.state).toBe('review');
		const a = api.drafts.find((d: { chamber: string }) => d.chamber === 'QE2-A');
		expect(a.screenedOut.map((s: { waferId: string }) => s.waferId)).toContain(OUTLIER);
		expect(a.n).toBe(60 - a.screenedOut.length);
		expect(a.warnings).toEqual([]);
		expect(a.limits.t2).toBeGreaterThan(0);
		await ctx.close();
	});

	it('a second engineer approves all; the golden wafers are recorded and rescored', async () => {
		// the admin is the second engineer here (any engineer other than the one who started it)
		const ctx = await browser.newContext({ viewport: { width: 1280, height: 800 } });
		await ctx.addCookies([{ name: 'ls_theme', value: 'light', url: base() }]);
		const page = await ctx.newPage();
		await signInTo(page, 'admin', campaignPath);
		await page.getByRole('button', { name: /Approve all 2 without warnings/ }).click();
		await expect.poll(() => page.getByTestId('flash').textContent()).toContain('2 baselines approved');
		await expect.poll(() => page.getByTestId('campaign-state').textContent(), { timeout: 30_000 }).toContain('2 of 2 rescored');
		expect(await page.getByTestId('draft-QE2-A-main').textContent()).toContain('approved');
		const golden = await k('wafer_steps').whereIn('chamber_id', ids.chambers).where({ golden: true }).count({ n: '*' }).first();
		const trained = await k('baselines').where({ recipe_step_id: ids.step, status: 'active' }).sum({ n: 'n' }).first();
		expect(Number(golden!.n)).toBe(Number(trained!.n));
		expect((await k('wafer_steps').where({ wafer_id: OUTLIER }).first('golden')).golden).toBeFalsy();
		const unscored = await k('wafer_steps').whereIn('chamber_id', ids.chambers).whereNot({ scoring_state: 'scored' }).count({ n: '*' }).first();
		expect(Number(unscored!.n)).toBe(0);
		await screenshot(page, 'qualification-approved-1280-light');
		// by role: a viewer reads the campaign but cannot approve; no one anonymous reads the API
		const id = campaignPath.split('/').pop();
		const viewer = await signIn('viewer');
		expect((await request(campaignPath, { cookie: viewer })).status).toBe(200);
		expect((await request(`/api/qualifications/${id}`)).status).toBe(401);
		expect((await request(`/api/qualifications/${id}/approve`, { method: 'POST', cookie: viewer, headers: { origin: base() } })).status).toBe(403);
		expect((await request(`${campaignPath}?/approve`, { cookie: viewer, form: { mode: 'all' } })).status).toBe(403);
		await ctx.close();
	});

	it('the baselines page picks the same way: ticked wafers first, the outlier after them with its reason', async () => {
		const ctx = await browser.newContext({ viewport: { width: 1280, height: 800 } });
		const page = await ctx.newPage();
		await signInTo(page, 'engineer', `/baselines/QE2-A/${ids.step}`);
		const rows = page.getByTestId('candidate-table').locator('tbody tr');
		await rows.first().waitFor();
		const texts = await rows.allTextContents();
		const at = texts.findIndex((t) => t.includes(OUTLIER));
		expect(at).toBeGreaterThan(0);
		expect(texts[at]).toMatch(/screened out: .*qe2_f7/);
		expect(await rows.nth(at).locator('input[type="checkbox"]').isChecked()).toBe(false);
		const checked = await rows.locator('input[type="checkbox"]').evaluateAll((els) => els.map((e) => (e as HTMLInputElement).checked));
		// every ticked row comes before every unticked one
		expect(checked.indexOf(false)).toBeGreaterThan(0);
		expect(checked.slice(checked.indexOf(false)).includes(true)).toBe(false);
		expect(texts[0]).toContain('golden before');
		await screenshot(page, 'baseline-candidates-1280');
		// the list rule: paste wafer ids
		await page.getByRole('radio', { name: 'wafer ids' }).check();
		await page.getByRole('textbox', { name: 'Wafer ids' }).fill(['QE2-A-L2-0', 'QE2-A-L2-1', 'nope-9'].join('\n'));
		await page.getByRole('button', { name: 'Show wafers' }).click();
		await expect.poll(() => page.getByTestId('golden-warnings').textContent()).toContain('nope-9');
		expect(await rows.count()).toBe(2);
		await ctx.close();
	});

	it('looks right at 2560 × 1440 in both themes', async () => {
		for (const scheme of ['light', 'dark'] as const) {
			const ctx = await browser.newContext({ viewport: { width: 2560, height: 1440 } });
			await ctx.addCookies([{ name: 'ls_theme', value: scheme, url: base() }]);
			const page = await ctx.newPage();
			await signInTo(page, 'engineer', '/qualifications');
			await screenshot(page, `qualification-list-2560-${scheme}`);
			await page.goto(`${base()}${campaignPath}`);
			await page.getByTestId('review-table').waitFor();
			await screenshot(page, `qualification-review-2560-${scheme}`);
			await ctx.close();
		}
	});
});
