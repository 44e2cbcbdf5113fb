/**
 * Golden rules, robust screening, qualification campaigns, four-eyes, rescoring and requalification
 * proposals on an empty database with generated wafers (not the demo): 3 chambers × 2 recipe steps,
 * 4 lots of 20 wafers each at one wafer every 10 minutes (a real chamber's pace).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../helpers/temp-db.ts';
import { createFab, insertWaferSteps, latentRows } from '../helpers/fab.ts';
import { createUser } from '../../src/lib/server/users.ts';
import { putSetting } from '../../src/lib/server/settings.ts';
import { now, setClock } from '../../src/lib/server/time.ts';
import { logMaintenance } from '../../src/lib/server/maintenance.ts';
import { selectGolden } from '../../src/lib/server/golden-sets.ts';
import { approveCampaign, createCampaign, getCampaign, QualificationError, LEASE_MS } from '../../src/lib/server/qualifications.ts';
import { runDrafts, runRescores } from '../../src/lib/server/qualification-runner.ts';
import { parseCampaignRequest } from '../../src/lib/server/qualification-input.ts';
import { proposeRequalifications, requalifyStatus, REQUALIFY_WAFERS } from '../../src/lib/server/requalification.ts';

let env: Awaited<ReturnType<typeof useTempDb>>;
let fab: Awaited<ReturnType<typeof createFab>>;
let step2: number;
let engineer: string;
let reviewer: string;
const T0 = Date.UTC(2026, 9, 1);
const P = 40;
const EVERY = 10 * 60_000;
/** The wafer of chamber 1, step 1 with feature f5 shifted by 30× its noise (invisible to the process factors). */
const OUTLIER = 'c1s1L1-7';

async function loadHistory(chamberIdx: number, recipeStepId: number, tag: string, lots: number, start: number, seed: number) {
	for (let l = 0; l < lots; l++) {
		const rows = latentRows(20, P, seed + l);
		const prefix = `${tag}L${l}`;
		if (`${prefix}-7` === OUTLIER) rows[7][5] += 3;
		await insertWaferSteps(env.k, { chamberId: fab.chamberIds[chamberIdx], recipeStepId, rows, start: start + l * 20 * EVERY, everyMs: EVERY, prefix });
	}
}

beforeAll(async () => {
	env = await useTempDb();
	setClock(T0 + 90 * EVERY); // just after the generated history: approvals come after it, as in a fab
	fab = await createFab(env.k, { chambers: 3, features: P });
	const recipe = await env.k('recipes').first('id');
	const [s2] = await env.k('recipe_steps').insert({ recipe_id: recipe.id, name: 'over', position: 2 }).returning('id');
	step2 = typeof s2 === 'object' ? s2.id : s2;
	await env.k('features').insert(fab.featureNames.map((name, j) => ({ recipe_step_id: step2, set_version: 1, position: j, name, kind: 'sensor', unit: 'a.u.' })));
	for (let c = 0; c < 3; c++) {
		await loadHistory(c, fab.recipeStepId, `c${c}s1`, 4, T0, 100 * c);
		await loadHistory(c, step2, `c${c}s2`, 4, T0 + 60_000, 100 * c + 50);
	}
	engineer = (await createUser({ username: 'eng', displayName: 'Eng', password: 'engineer-pass', role: 'engineer' })).id;
	reviewer = (await createUser({ username: 'rev', displayName: 'Rev', password: 'reviewer-pass', role: 'engineer' })).id;
}, 60_000);
afterAll(async () => {
	setClock(null);
	await env.cleanup();
});

describe('golden rules', () => {
	it('by lots: only the listed lots, the planted outlier screened out with its reason, missing lots named', async () => {
		const sel = await selectGolden(fab.chamberIds[1], fab.recipeStepId, { kind: 'lots', lots: ['c1s1L1-lot', 'c1s1L2-lot', 'nope-lot'] });
		expect(sel.candidates).toHaveLength(40);
		expect(new Set(sel.candidates.map((c) => c.lotId))).toEqual(new Set(['c1s1L1-lot', 'c1s1L2-lot']));
		const out = sel.screenedOut.find((s) => s.waferId === OUTLIER);
		expect(out?.reason).toMatch(/screened out: varies in a way the other candidates do not/);
		expect(out?.reason).toMatch(/f5 \+/);
		expect(sel.chosen).not.toContain(out!.waferStepId);
		expect(sel.warnings.join(' ')).toMatch(/1 listed lot has no wafer on this chamber × step: nope-lot/);
		// ticked first, excluded after, each excluded one with a reason
		const firstExcluded = sel.candidates.findIndex((c) => !c.ticked);
		expect(sel.candidates.slice(firstExcluded).every((c) => !c.ticked && c.excluded)).toBe(true);
		expect(sel.candidates.slice(0, firstExcluded).every((c) => c.ticked)).toBe(true);
	});

	it('by wafer ids: exactly the listed wafers that exist', async () => {
		const ids = Array.from({ length: 15 }, (_, i) => `c2s2L3-${i}`).concat(['ghost-1']);
		const sel = await selectGolden(fab.chamberIds[2], step2, { kind: 'waferIds', waferIds: ids });
		expect(sel.candidates.map((c) => c.waferId).sort()).toEqual(ids.slice(0, 15).sort());
		expect(sel.warnings.join(' ')).toMatch(/1 listed wafer was not run on this chamber × step: ghost-1/);
		expect(sel.warnings.join(' ')).toMatch(/come from 1 lot only/);
	});

	it('after the latest wet clean: seasoning wafers left out, then the first N in control', async () => {
		const ch = fab.chamberIds[0];
		const cleanAt = T0 + 40 * EVERY - 1; // between lot 1 and lot 2 of chamber 0
		await logMaintenance({ chamberId: ch, kind: 'wet_clean', at: cleanAt, userId: engineer, comment: '' });
		await putSetting('baseline_policy', { seasoningWafers: 10 }, null);
		const sel = await selectGolden(ch, fab.recipeStepId, { kind: 'afterWetClean', count: 15 });
		expect(sel.wetCleanAt).toBe(cleanAt);
		const chosen = sel.candidates.filter((c) => c.ticked);
		expect(chosen).toHaveLength(15);
		expect(chosen.every((c) => c.processedAt > cleanAt)).toBe(true);
		const seasoning = sel.candidates.filter((c) => c.excluded?.startsWith('seasoning'));
		expect(seasoning).toHaveLength(10);
		// the first chosen wafer is the 11th after the clean (none of these is an outlier)
		expect(chosen[0].waferId).toBe('c0s1L2-10');
		expect(sel.goldenFrom).toBe(chosen[0].processedAt);
		const none = await selectGolden(fab.chamberIds[1], fab.recipeStepId, { kind: 'afterWetClean', count: 15 });
		expect(none.chosen).toHaveLength(0);
		expect(none.warnings[0]).toMatch(/No wet clean is logged/);
	});
});

describe('request validation', () => {
	it('names the field that is wrong', async () => {
		const ok = { recipe: 'RCP', step: 'main', golden: { lots: ['x'] } };
		await expect(parseCampaignRequest({ ...ok, recipe: 'NOPE' })).rejects.toMatchObject({ field: 'recipe' });
		await expect(parseCampaignRequest({ ...ok, step: 'nope' })).rejects.toMatchObject({ field: 'step' });
		await expect(parseCampaignRequest({ ...ok, chambers: ['CH1', 'CH9'] })).rejects.toThrow(/Unknown chamber: CH9/);
		await expect(parseCampaignRequest({ ...ok, golden: { lots: ['a'], waferIds: ['b'] } })).rejects.toMatchObject({ field: 'golden' });
		await expect(parseCampaignRequest({ ...ok, golden: { from: '2026-10-02', to: '2026-10-01' } })).rejects.toMatchObject({ field: 'golden.from' });
		await expect(parseCampaignRequest({ ...ok, golden: { afterWetClean: { count: 5 } } })).rejects.toMatchObject({ field: 'golden.afterWetClean.count' });
		await expect(parseCampaignRequest({ ...ok, components: 0 })).rejects.toMatchObject({ field: 'components' });
		const r = await parseCampaignRequest({ ...ok, steps: ['main', 'over'] });
		expect(r.recipeStepIds).toEqual([fab.recipeStepId, step2]);
		expect(r.chamberIds).toEqual(fab.chamberIds);
	});
});

describe('a campaign over 3 chambers × 2 steps', () => {
	let id: number;
	it('drafts every chamber × step in the database, with progress', async () => {
		const req = await parseCampaignRequest({ recipe: 'RCP', steps: ['main', 'over'], golden: { from: new Date(T0).toISOString(), to: new Date(T0 + 80 * EVERY).toISOString() } });
		id = await createCampaign({ ...req, createdBy: engineer });
		const before = await getCampaign(id);
		expect(before!.campaign.state).toBe('drafting');
		expect(before!.campaign.progress).toMatchObject({ total: 6, done: 0 });
		const fitted = await runDrafts(id);
		expect(fitted).toBe(6);
		const after = (await getCampaign(id))!;
		expect(after.campaign.state).toBe('review');
		expect(after.campaign.progress).toMatchObject({ total: 6, done: 6, drafted: 6 });
		for (const d of after.drafts) {
			expect(d.baselineId).not.toBeNull();
			expect(d.n).toBeGreaterThanOrEqual(10);
			expect(d.limits!.t2).toBeGreaterThan(0);
		}
		// the outlier shows in the review row of chamber CH2 (index 1), step main
		const row = after.drafts.find((d) => d.chamber === 'CH2' && d.step === 'main')!;
		expect(row.screenedOut.map((s) => s.waferId)).toContain(OUTLIER);
		const training = await env.k('baseline_training_wafers as t').join('wafer_steps as w', 'w.id', 't.wafer_step_id').where('t.baseline_id', row.baselineId).pluck('w.wafer_id');
		expect(training).not.toContain(OUTLIER);
	});

	it('under four-eyes the engineer who started it cannot approve; a second engineer approves every draft without warnings', async () => {
		await putSetting('baseline_policy', { fourEyes: true, seasoningWafers: 10 }, null);
		await expect(approveCampaign(id, engineer, undefined)).rejects.toThrow(QualificationError);
		const { drafts } = (await getCampaign(id))!;
		// make one draft carry a warning: it must stay a draft under approve-all
		const warned = drafts.find((d) => d.chamber === 'CH3' && d.step === 'over')!;
		await env.k('qualification_drafts').where({ id: warned.id }).update({ warnings_json: JSON.stringify(['test warning']) });
		const r = await approveCampaign(id, reviewer, undefined);
		expect(r.approved).toHaveLength(5);
		expect(r.refused).toEqual([]);
		expect(r.approved.map((a) => a.baselineId)).not.toContain(warned.baselineId);
		expect((await env.k('baselines').where({ id: warned.baselineId }).first('status')).status).toBe('draft');
		const c = (await getCampaign(id))!.campaign;
		expect(c.state).toBe('review'); // one draft still awaits a decision
		// an explicit pick approves it
		const r2 = await approveCampaign(id, reviewer, [warned.baselineId!]);
		expect(r2.approved).toHaveLength(1);
		expect((await getCampaign(id))!.campaign.state).toBe('approved');
		await expect(approveCampaign(id, reviewer, [warned.baselineId!])).rejects.toMatchObject({ field: 'baselineIds' });
	});

	it('approval records the golden wafers and rescoring scores them', async () => {
		const golden = await env.k('wafer_steps').where({ golden: true }).count({ n: '*' }).first();
		const training = await env.k('baseline_training_wafers as t').join('baselines as b', 'b.id', 't.baseline_id').where('b.status', 'active').count({ n: '*' }).first();
		expect(Number(golden!.n)).toBe(Number(training!.n));
		expect(Number(golden!.n)).toBeGreaterThan(6 * 60);
		expect(await env.k('wafer_steps').where({ golden: true }).whereNot({ scoring_state: 'scored' }).count({ n: '*' }).first()).toEqual({ n: Number(golden!.n) });
		const n = await runRescores(id);
		expect(n).toBe(6);
		const unscored = await env.k('wafer_steps').where({ golden: true }).whereNot({ scoring_state: 'scored' }).count({ n: '*' }).first();
		expect(Number(unscored!.n)).toBe(0);
		const { campaign, drafts } = (await getCampaign(id))!;
		expect(campaign.progress.rescored).toBe(6);
		expect(drafts.every((d) => d.rescore.state === 'done' && d.rescore.rescored! >= d.n!)).toBe(true);
	});
});

describe('a stopped process', () => {
	it('leaves claims that the next runner takes over once their lease expired, and only those', async () => {
		const lots = ['c0s1L0-lot', 'c0s1L1-lot', 'c0s1L3-lot', 'c1s1L0-lot', 'c1s1L2-lot', 'c1s1L3-lot'];
		const id = await createCampaign({ recipeStepIds: [fab.recipeStepId], chamberIds: [fab.chamberIds[0], fab.chamberIds[1]], rule: { kind: 'lots', lots }, components: 'auto', createdBy: engineer });
		const [stale, fresh] = await env.k('qualification_drafts').where({ campaign_id: id }).orderBy('id');
		await env.k('qualification_drafts').where({ id: stale.id }).update({ state: 'working', claimed_at: now() - LEASE_MS - 1 });
		await env.k('qualification_drafts').where({ id: fresh.id }).update({ state: 'working', claimed_at: now() });
		expect(await runDrafts(id)).toBe(1);
		const after = (await getCampaign(id))!;
		expect(after.drafts.map((d) => d.state).sort()).toEqual(['drafted', 'working']);
		expect(after.campaign.state).toBe('drafting'); // one draft is still someone's
	});
});

describe('requalification after a wet clean', () => {
	it('waits for wafers past seasoning, then proposes a draft that nobody approved', async () => {
		const ch = fab.chamberIds[2];
		const cleanAt = T0 + 100 * EVERY;
		setClock(cleanAt + 60 * EVERY);
		await logMaintenance({ chamberId: ch, kind: 'wet_clean', at: cleanAt, userId: engineer, comment: 'chamber clean' });
		// 10 seasoning wafers + 20 past it: not enough yet
		await insertWaferSteps(env.k, { chamberId: ch, recipeStepId: fab.recipeStepId, rows: latentRows(30, P, 700), start: cleanAt + EVERY, everyMs: EVERY, prefix: 'rq1' });
		let st = (await requalifyStatus()).find((c) => c.chamberId === ch)!;
		expect(st.steps.find((s) => s.recipeStepId === fab.recipeStepId)).toMatchObject({ state: 'waiting', pastSeasoning: 20, needed: REQUALIFY_WAFERS });
		expect(await proposeRequalifications()).toEqual([]);
		await insertWaferSteps(env.k, { chamberId: ch, recipeStepId: fab.recipeStepId, rows: latentRows(20, P, 701), start: cleanAt + 31 * EVERY, everyMs: EVERY, prefix: 'rq2' });
		const made = await proposeRequalifications();
		expect(made).toHaveLength(1);
		const { campaign, drafts } = (await getCampaign(made[0]))!;
		expect(campaign.kind).toBe('requalify');
		expect(campaign.state).toBe('review');
		expect(drafts).toHaveLength(1);
		expect(drafts[0]).toMatchObject({ chamber: 'CH3', step: 'main', state: 'drafted', baselineStatus: 'draft' });
		st = (await requalifyStatus()).find((c) => c.chamberId === ch)!;
		expect(st.steps.find((s) => s.recipeStepId === fab.recipeStepId)).toMatchObject({ state: 'proposed', campaignId: made[0] });
		expect(st.steps.find((s) => s.recipeStepId === step2)).toMatchObject({ state: 'waiting', pastSeasoning: 0 });
		// a second run proposes nothing new
		expect(await proposeRequalifications()).toEqual([]);
	});
});
