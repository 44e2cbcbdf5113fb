/**
 * Fleet matching on an EMPTY installation with generated data (not the demo): 8 chambers, baselines
 * approved through the normal code (wafer_steps.golden is never set), the fleet model built from the
 * approved baselines' golden wafers, matching run: nothing flagged; then one chamber offset by 2σ on
 * three features: flagged, with those features named and a fleet alarm; an approval makes the model
 * stale and the next run rebuilds it; the runs and skips are recorded with their reasons.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../../helpers/temp-db.ts';
import { createFab, insertWaferSteps, latentRows } from '../../helpers/fab.ts';
import { approveBaseline, createDraftBaseline } from '../../../src/lib/server/baselines.ts';
import { fleetModelState, runFleetMatching } from '../../../src/lib/server/fleet-matching.ts';
import { latestRun, fleetSteps } from '../../../src/lib/server/views/fleet-view.ts';
import { createUser } from '../../../src/lib/server/users.ts';

let env: Awaited<ReturnType<typeof useTempDb>>;
let fab: Awaited<ReturnType<typeof createFab>>;
let engineer: string;
let reviewer: string;
const HOUR = 3_600_000;
const T0 = Date.UTC(2026, 10, 2);
const P = 20;
const C = 8;

async function approveFor(ci: number, seed: number, start: number) {
	const ws = await insertWaferSteps(env.k, { chamberId: fab.chamberIds[ci], recipeStepId: fab.recipeStepId, rows: latentRows(40, P, seed), start, prefix: `g${ci}-${seed}` });
	const d = await createDraftBaseline({ chamberId: fab.chamberIds[ci], recipeStepId: fab.recipeStepId, waferStepIds: ws.map((w) => w.id), components: 3, builtBy: engineer });
	await approveBaseline(d.id, reviewer);
	return d.id;
}

beforeAll(async () => {
	env = await useTempDb();
	fab = await createFab(env.k, { chambers: C, features: P });
	engineer = (await createUser({ username: 'eng', displayName: 'Eng', password: 'engineer-pass', role: 'engineer' })).id;
	reviewer = (await createUser({ username: 'rev', displayName: 'Rev', password: 'reviewer-pass', role: 'engineer' })).id;
});
afterAll(() => env.cleanup());

describe('fleet matching on a new installation', () => {
	it('says why it cannot run before enough chambers have approved baselines', async () => {
		expect((await fleetSteps(env.k))[0].lastAttempt).toBeNull(); // never run
		await approveFor(0, 100, T0);
		await approveFor(1, 101, T0);
		const r = await runFleetMatching(fab.recipeStepId, T0 + 10 * HOUR, env.k, { trigger: 'manual' });
		expect(r.skipped).toMatch(/too few chambers: 2 approved chamber baselines.*3 needed/);
		const s = (await fleetSteps(env.k))[0];
		expect(s.lastAttempt).toMatchObject({ status: 'skipped', reason: expect.stringMatching(/too few chambers/) });
		expect(s.lastRunAt).toBeNull();
	});

	it('builds the model from approved baselines only (golden flag unset) and flags nothing on an in-family fleet', async () => {
		for (let ci = 2; ci < C; ci++) await approveFor(ci, 100 + ci, T0);
		// Approval marks the training wafers golden; unset the flag so the model is shown to come from
		// the approved baselines' own record (baseline_training_wafers), not from the flag.
		expect(Number((await env.k('wafer_steps').where({ golden: true }).count({ n: '*' }).first())!.n)).toBeGreaterThan(0);
		await env.k('wafer_steps').update({ golden: false });
		for (let ci = 0; ci < C; ci++)
			await insertWaferSteps(env.k, { chamberId: fab.chamberIds[ci], recipeStepId: fab.recipeStepId, rows: latentRows(25, P, 500 + ci), start: T0 + 2 * HOUR, prefix: `r${ci}` });
		const r = await runFleetMatching(fab.recipeStepId, T0 + 10 * HOUR, env.k, { trigger: 'manual' });
		expect(r.skipped).toBeUndefined();
		expect(r.rebuilt).toBe(true);
		expect(r.chambers).toBe(C);
		expect(r.flagged).toEqual([]);
		const state = await fleetModelState(fab.recipeStepId, env.k);
		expect(state).toMatchObject({ stale: false, chambers: C, goldenWafers: C * 40, approvedChambers: C });
	});

	it('flags the chamber offset by 2σ on three features, names them, and opens a fleet alarm', async () => {
		const golden = latentRows(200, P, 9);
		const sd = Array.from({ length: P }, (_, j) => {
			const m = golden.reduce((s, x) => s + x[j], 0) / golden.length;
			return Math.sqrt(golden.reduce((s, x) => s + (x[j] - m) ** 2, 0) / (golden.length - 1));
		});
		const rows = latentRows(25, P, 777).map((x) => {
			for (const j of [4, 5, 6]) x[j] += 2 * sd[j];
			return x;
		});
		await insertWaferSteps(env.k, { chamberId: fab.chamberIds[2], recipeStepId: fab.recipeStepId, rows, start: T0 + 12 * HOUR, prefix: 'off' });
		for (const ci of [0, 1, 3, 4, 5, 6, 7])
			await insertWaferSteps(env.k, { chamberId: fab.chamberIds[ci], recipeStepId: fab.recipeStepId, rows: latentRows(25, P, 900 + ci), start: T0 + 12 * HOUR, prefix: `s${ci}` });
		const r = await runFleetMatching(fab.recipeStepId, T0 + 20 * HOUR, env.k, { trigger: 'manual' });
		expect(r.rebuilt).toBe(false);
		expect(r.flagged).toEqual(['CH3']);
		expect(r.alarmsOpened).toHaveLength(1);
		const run = await latestRun(fab.recipeStepId, env.k);
		const ch3 = run.rows.find((x) => x.chamberCode === 'CH3')!;
		expect(ch3.flagged).toBe(true);
		expect(ch3.z).toBeGreaterThan(run.threshold);
		const named = ch3.separating.filter((f) => f.flagged).map((f) => f.feature).sort();
		expect(named).toEqual(['f4', 'f5', 'f6']);
		expect(ch3.separating.filter((f) => f.flagged).every((f) => f.offsetSd > 1.5 && f.offsetSd < 2.5)).toBe(true);
		const alarm = await env.k('alarms').where({ id: r.alarmsOpened[0] }).first();
		expect(alarm.rule).toBe('fleet');
		expect(JSON.parse(alarm.detail_json).separating.sort()).toEqual(['f4', 'f5', 'f6']);
		expect(run.rows.filter((x) => x.flagged)).toHaveLength(1);
	});

	it('marks the fleet model stale when a chamber baseline is approved, and rebuilds it on the next run', async () => {
		await approveFor(5, 4242, T0 + 21 * HOUR);
		expect((await fleetModelState(fab.recipeStepId, env.k)).stale).toBe(true);
		const r = await runFleetMatching(fab.recipeStepId, T0 + 30 * HOUR, env.k, { trigger: 'schedule' });
		expect(r.rebuilt).toBe(true);
		expect((await fleetModelState(fab.recipeStepId, env.k)).stale).toBe(false);
		expect(Number((await env.k('baselines').where({ scope: 'fleet', status: 'active' }).count({ n: '*' }).first())!.n)).toBe(1);
		expect(Number((await env.k('baselines').where({ scope: 'fleet', status: 'retired' }).count({ n: '*' }).first())!.n)).toBe(1);
	});
});

describe('GET/POST /api/matching (handlers called directly; access is the route policy, tested by the route matrix)', () => {
	const call = async (method: 'GET' | 'POST', query: string, body?: string) => {
		const mod = await import('../../../src/routes/api/matching/+server.ts');
		const url = new URL(`http://localhost/api/matching${query}`);
		const request = new Request(url, { method, ...(body !== undefined ? { body } : {}) });
		// eslint-disable-next-line @typescript-eslint/no-explicit-any
		const res: Response = await (mod[method] as any)({ url, request, locals: { user: { id: engineer, role: 'engineer' }, apiToken: null } });
		return { status: res.status, body: await res.json() };
	};
	it('answers the latest run with the contract fields', async () => {
		const r = await call('GET', '?recipe=RCP&step=main');
		expect(r.status).toBe(200);
		expect(r.body.ranAt).toMatch(/^2026-11-03T/);
		const ch3 = r.body.chambers.find((c: { chamber: string }) => c.chamber === 'CH3');
		// the run after the rebuild still sees CH3's offset window
		expect(ch3).toMatchObject({ flagged: true });
		expect(ch3.separating.map((f: { feature: string }) => f.feature).sort()).toEqual(['f4', 'f5', 'f6']);
		expect(r.body.chambers.filter((c: { flagged: boolean }) => c.flagged)).toHaveLength(1);
		for (const c of r.body.chambers) expect(Object.keys(c)).toEqual(expect.arrayContaining(['chamber', 'distance', 'z', 'flagged', 'separating']));
		expect(r.body.fleetModel.stale).toBe(false);
	});
	it('runs now on POST and says why a step is skipped', async () => {
		const r = await call('POST', '', JSON.stringify({ recipe: 'RCP', step: 'main' }));
		expect(r.status).toBe(200);
		expect(r.body.runs).toHaveLength(1);
		expect(r.body.runs[0]).toMatchObject({ recipe: 'RCP', step: 'main' });
		// the wall clock is far past the generated wafers: no chamber ran in the last 14 days
		expect(r.body.runs[0].skipped).toMatch(/too few chambers: 0 ran this step/);
		const g = await call('GET', '?recipe=RCP&step=main');
		expect(g.body.latestAttempt).toMatchObject({ status: 'skipped', trigger: 'api' });
		expect(g.body.ranAt).not.toBeNull(); // the latest completed run stays readable
	});
	it('gives clear 400s', async () => {
		expect((await call('GET', '')).body.error).toMatch(/recipe=CODE/);
		expect((await call('GET', '?recipe=NOPE')).body.error).toMatch(/No recipe "NOPE"/);
		expect((await call('GET', '?recipe=RCP&step=etch')).body.error).toMatch(/no step "etch".*main/);
		expect((await call('GET', '?recipe=RCP&foo=1')).status).toBe(400);
		expect((await call('POST', '', '{bad')).body.error).toMatch(/not JSON/);
		expect((await call('POST', '', '[]')).body.error).toMatch(/JSON object/);
		expect((await call('POST', '', JSON.stringify({ step: 'main' }))).body.error).toMatch(/Name the recipe/);
		expect((await call('POST', '', JSON.stringify({ recipe: 7 }))).body).toMatchObject({ field: 'recipe' });
	});
});
