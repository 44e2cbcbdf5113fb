/**
 * The EWMA rule's limits widened for autocorrelated wafers (Zhang 1998, EWMAST): what a baseline
 * stores (the ACF of its ratios in processing order; here every wafer of the training window is
 * golden, so the consecutive series is the cross-validated golden one — the sparse case is in
 * ewma-consecutive-acf.test.ts) and how the alarm rules
 * and the chamber chart use it; baselines stored without an ACF keep the independent-wafer limits.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../helpers/temp-db.ts';
import { createFab, insertWaferSteps, latentRows } from '../helpers/fab.ts';
import {
	approveBaseline,
	createDraftBaseline,
	getModel,
	type EwmaReference
} from '../../src/lib/server/baselines.ts';
import { evaluateRules, type ScoredPoint } from '../../src/lib/server/alarms.ts';
import { driftChartSd, scoreScale } from '../../src/lib/monitoring/drift.ts';
import { designRules } from '../../src/lib/monitoring/alarm-rules.ts';
import { ruleBaselineOf } from '../../src/lib/server/scoring.ts';
import { scoreWaferSteps } from '../../src/lib/server/scoring.ts';
import { AlarmPolicy } from '../../src/lib/server/settings.ts';
import { getChamberSeries } from '../../src/lib/server/views/chamber-view.ts';
import {
	crossValidatedScores,
	ewmaInflation,
	sampleAutocorrelation
} from '../../src/lib/monitoring/index.ts';
import { createUser } from '../../src/lib/server/users.ts';

let env: Awaited<ReturnType<typeof useTempDb>>;
let fab: Awaited<ReturnType<typeof createFab>>;
let engineer: string;
const DAY = 86_400_000;
const T0 = Date.UTC(2026, 10, 1);

/** Golden rows with a lot effect: each lot of 10 wafers shares an offset on every feature (seeded). */
function lotRows(lots: number, seed: number): Float64Array[] {
	const rows = latentRows(lots * 10, 12, seed);
	const offsets = latentRows(lots, 12, seed + 1000).map((r) => r[0] - 10);
	return rows.map((r, i) => r.map((v) => v + 0.8 * offsets[Math.floor(i / 10)]));
}

beforeAll(async () => {
	env = await useTempDb();
	fab = await createFab(env.k, { chambers: 1, features: 12 });
	engineer = (
		await createUser({ username: 'eng', displayName: 'Eng', password: 'engineer-pass', role: 'engineer' })
	).id;
});
afterAll(() => env.cleanup());

describe('a baseline keeps the ACF of its cross-validated golden ratios', () => {
	let ref: EwmaReference;
	let baselineId: number;
	it('in processing order (not id order), r_1 … r_M with M = min(25, n − 1)', async () => {
		const rows = lotRows(8, 3);
		const ch = fab.chamberIds[0];
		// The later half is inserted first, so ids do not follow processing time.
		const late = await insertWaferSteps(env.k, {
			chamberId: ch,
			recipeStepId: fab.recipeStepId,
			rows: rows.slice(40),
			start: T0 + 40 * 120_000,
			prefix: 'late',
			golden: true
		});
		const early = await insertWaferSteps(env.k, {
			chamberId: ch,
			recipeStepId: fab.recipeStepId,
			rows: rows.slice(0, 40),
			start: T0,
			prefix: 'early',
			golden: true
		});
		expect(late[0].id).toBeLessThan(early[0].id);
		const d = await createDraftBaseline({
			chamberId: ch,
			recipeStepId: fab.recipeStepId,
			waferStepIds: [...late, ...early].map((w) => w.id),
			components: 3,
			builtBy: engineer
		});
		await approveBaseline(d.id, engineer);
		baselineId = d.id;
		ref = d.summary.ewmaReference!;
		expect(ref.n).toBe(80);
		expect(ref.t2.acf).toHaveLength(25);
		expect(ref.q.acf).toHaveLength(25);
		// The same numbers from the engine on the rows in time order (same model, same 5 folds).
		const cv = crossValidatedScores(rows, await getModel(d.id), 5);
		const t2 = sampleAutocorrelation(cv.t2Ratio, 25);
		const q = sampleAutocorrelation(cv.qRatio, 25);
		for (let k = 0; k < 25; k++) {
			expect(ref.t2.acf![k]).toBeCloseTo(t2[k], 12);
			expect(ref.q.acf![k]).toBeCloseTo(q[k], 12);
		}
		// Lots of 10 wafers sharing an offset: the golden ratios are positively correlated at lag 1.
		expect(Math.max(ref.t2.acf![0], ref.q.acf![0])).toBeGreaterThan(0.2);
		const stored = JSON.parse(
			(await env.k('baselines').where({ id: d.id }).first('summary_json')).summary_json
		);
		expect(stored.ewmaReference.t2.acf).toEqual(ref.t2.acf);
	});

	it('the chamber chart widens the EWMA limit by √F of the current policy λ and says F', async () => {
		const ch = fab.chamberIds[0];
		const ws = await insertWaferSteps(env.k, {
			chamberId: ch,
			recipeStepId: fab.recipeStepId,
			rows: lotRows(3, 9),
			start: T0 + DAY,
			prefix: 'new'
		});
		await env.k.transaction((trx) =>
			scoreWaferSteps(
				trx,
				ws.map((w) => ({
					id: w.id,
					chamberId: ch,
					recipeStepId: fab.recipeStepId,
					processedAt: w.processedAt,
					featureSetVersion: 1,
					values: w.values
				}))
			)
		);
		const s = await getChamberSeries({
			chamberId: ch,
			recipeStepId: fab.recipeStepId,
			from: T0 + DAY,
			to: T0 + 2 * DAY
		});
		const policy = AlarmPolicy.parse({});
		const F = {
			t2: ewmaInflation(policy.ewmaLambda, ref.t2.acf!, 80).factor,
			q: ewmaInflation(policy.ewmaLambda, ref.q.acf!, 80).factor
		};
		expect(s.ewma.varianceFactor).toEqual(F);
		// Every wafer of this training window is golden, so the consecutive series is the golden one
		// and the caption names that source and its length.
		expect(s.ewma.acf).toEqual({ source: 'consecutive', n: 80 });
		expect(Math.max(F.t2, F.q)).toBeGreaterThan(1.2); // the lot effect is seen
		// The drift chart runs on normal scores: limit L σ √F √(λ/(2 − λ)·(1 − (1 − λ)^{2i})) (Zhang 1998;
		// Roberts 1959), drawn back in ratio units through the ratio's fitted law (alarm-rules.ts).
		const last = s.ewmaQUpper.length - 1;
		const base = Math.sqrt(
			(policy.ewmaLambda / (2 - policy.ewmaLambda)) * (1 - (1 - policy.ewmaLambda) ** (2 * (last + 1)))
		);
		const rb = ruleBaselineOf({ alpha: 0.01, k: 3 }, ref);
		const L = designRules(policy).driftL;
		expect(s.ewmaQUpper[last]!).toBeCloseTo(scoreScale(rb.shape.q).ratio(L * Math.sqrt(F.q) * base), 9);
		expect(baselineId).toBe(s.baselineId[0]);
	});
});

describe('evaluateRules: the EWMA rule with and without a stored ACF', () => {
	const policy = AlarmPolicy.parse({});
	// A ratio series sitting 0.15 above the in-control mean (σ = 0.1). On the score scale (two-moment
	// law, h = 2·0.3²/0.1² = 18) 0.45 scores ≈ 1.41: the EWMA settles there, above the
	// independent-wafer limit 4.03 · √(0.2/1.8) ≈ 1.34 but below the widened one (× √F ≈ 1.64).
	const points: ScoredPoint[] = Array.from({ length: 60 }, (_, i) => ({
		waferStepId: i + 1,
		processedAt: T0 + i,
		t2: 0,
		q: 0,
		t2Ratio: 0.45,
		qRatio: 0.3,
		worstRatio: 0.45
	}));
	// Gross and run rules off: this is about the drift rule's widening.
	const limits = (ref: EwmaReference) => ruleBaselineOf({ alpha: 0.01, k: 3 }, ref);
	policy.singleEnabled = false;
	policy.runEnabled = false;
	const acf = [0.6, 0.4, 0.2, -0.1];
	it('an older baseline (no ACF) keeps today’s limits and alarms on the lot-to-lot level', () => {
		const old: EwmaReference = { t2: { mean: 0.3, sd: 0.1 }, q: { mean: 0.3, sd: 0.1 }, folds: 5 };
		expect(driftChartSd(old.t2, old.n, 0.2)).toEqual({ sd: 1, inflation: null });
		const v = evaluateRules([], points, limits(old), policy);
		expect(v.filter((x) => x.rule === 'ewma').length).toBeGreaterThan(0);
	});
	it('with the golden ACF the limit is wider by √F (F = 1 + 2 Σ_{k ≤ 3} r_k 0.8^k (1 − 0.8^{2(25−k)})) and stays quiet', () => {
		const ref: EwmaReference = {
			t2: { mean: 0.3, sd: 0.1, acf },
			q: { mean: 0.3, sd: 0.1, acf },
			folds: 5,
			n: 80
		};
		const F =
			1 + 2 * (0.6 * 0.8 * (1 - 0.8 ** 48) + 0.4 * 0.64 * (1 - 0.8 ** 46) + 0.2 * 0.512 * (1 - 0.8 ** 44));
		expect(driftChartSd(ref.t2, ref.n, 0.2).sd).toBeCloseTo(Math.sqrt(F), 12);
		expect(evaluateRules([], points, limits(ref), policy).filter((x) => x.rule === 'ewma')).toEqual([]);
		// A real shift still trips it.
		const shifted = points.map((p) => ({ ...p, t2Ratio: 0.6 }));
		expect(
			evaluateRules([], shifted, limits(ref), policy).filter((x) => x.rule === 'ewma').length
		).toBeGreaterThan(0);
	});
});
