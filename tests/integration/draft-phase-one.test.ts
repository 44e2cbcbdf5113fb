import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../helpers/temp-db.ts';
import { createFab, insertWaferSteps, latentRows } from '../helpers/fab.ts';
import { createDraftBaseline, getModel } from '../../src/lib/server/baselines.ts';
import { createUser } from '../../src/lib/server/users.ts';

// The draft's summary carries the golden-set screening (summary.phaseOne) and the warnings
// (summary.warnings) in the shape the qualification campaigns read.
let env: Awaited<ReturnType<typeof useTempDb>>;
let fab: Awaited<ReturnType<typeof createFab>>;
let engineer: string;
const T0 = Date.UTC(2026, 10, 1);

beforeAll(async () => {
	env = await useTempDb();
	fab = await createFab(env.k, { chambers: 1, features: 12 });
	engineer = (await createUser({ username: 'eng', displayName: 'Eng', password: 'engineer-pass', role: 'engineer' })).id;
});
afterAll(() => env.cleanup());

describe('draft baseline: Phase I screening and warnings in the summary', () => {
	it('flags a planted golden outlier with its reason, states the expected false count, and warns on one lot and a short span', async () => {
		const rows = latentRows(24, 12, 41);
		rows[9] = Float64Array.from(rows[9], (v, j) => (j === 5 ? v + 40 : v)); // one channel far out
		const ws = await insertWaferSteps(env.k, { chamberId: fab.chamberIds[0], recipeStepId: fab.recipeStepId, rows, start: T0, prefix: 'g', golden: true });
		const d = await createDraftBaseline({ chamberId: fab.chamberIds[0], recipeStepId: fab.recipeStepId, waferStepIds: ws.map((w) => w.id), components: 3, builtBy: engineer });
		const p1 = d.summary.phaseOne!;
		expect(p1.alpha).toBe(0.01);
		expect(p1.expectedFalseFlags).toBeCloseTo(24 * 0.01, 12);
		expect(p1.wafers).toHaveLength(24);
		expect(Object.keys(p1.wafers[0]).sort()).toEqual(['flagged', 'q', 't2', 'waferId', 'waferStepId']);
		expect(p1.flagged.map((f) => f.waferId)).toContain('g-9');
		expect(p1.flagged.find((f) => f.waferId === 'g-9')!.reason).toMatch(/Q .* above/);
		expect(p1.wafers.find((w) => w.waferId === 'g-9')!.flagged).toBe(true);
		expect(p1.t2Limit).toBeGreaterThan(0);
		expect(p1.qLimit).toBeGreaterThan(0);
		// All 24 wafers from one lot, two minutes apart: both warnings.
		expect(d.summary.warnings!.some((w) => /one lot/.test(w))).toBe(true);
		expect(d.summary.warnings!.some((w) => /span only/.test(w))).toBe(true);
		expect(d.summary.limitMethod).toMatch(/cross-validated \(leave-one-out/);
		// The stored summary is the same, and the stored model scores with the calibrated limits.
		const row = await env.k('baselines').where({ id: d.id }).first('summary_json', 'q_limit');
		expect(JSON.parse(row.summary_json).phaseOne.flagged).toEqual(p1.flagged);
		const model = await getModel(d.id, env.k);
		expect(model.limitCalibration).toBe('cross-validated');
		expect(row.q_limit).toBe(model.limits.q);
	});
});
