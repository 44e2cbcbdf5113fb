/**
 * A baseline's EWMA variance factor F from the consecutive wafers of its training window, not from
 * the sparse golden wafers alone: the EWMA runs over consecutive wafers, so F depends on ρ at
 * consecutive-wafer lags (Zhang 1998). Golden wafers one in five apart see ρ(5), ρ(10), … instead.
 *
 * The simulated chamber (invented data): every feature follows one latent u_t, an AR(1) over
 * consecutive wafers with coefficient φ₀ = √φ, plus small independent noise. A one-component model
 * then has T² ∝ (u_t − ū)², and for a zero-mean Gaussian pair corr(X², Y²) = corr(X, Y)²
 * (Isserlis 1918, "On a formula for the product-moment coefficient of any order of a normal
 * frequency distribution in any number of variables", Biometrika 12:134), so the T² ratios have
 * ρ(k) = φ₀^{2k} = φ^k: an AR(1) ACF with coefficient φ. Q sees only the independent noise.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { XSadd as XSAdd } from 'ml-xsadd';
import { useTempDb } from '../helpers/temp-db.ts';
import { createFab } from '../helpers/fab.ts';
import { encodeValues } from '../../src/lib/server/feature-values.ts';
import { CONSECUTIVE_ACF_MIN, createDraftBaseline, getModel, type EwmaReference } from '../../src/lib/server/baselines.ts';
import { driftChartSd as ewmaChartSd } from '../../src/lib/monitoring/drift.ts';
import { getWaferStepsByIds } from '../../src/lib/server/wafer-steps.ts';
import {
	crossValidatedScores,
	ewmaInflation,
	ewmastVarianceFactor,
	sampleAutocorrelation
} from '../../src/lib/monitoring/index.ts';
import { gappedAutocorrelation } from '../../src/lib/monitoring/ewma-autocorrelation.ts';
import { createUser } from '../../src/lib/server/users.ts';

const T0 = Date.UTC(2026, 10, 1);
const EVERY = 120_000;
const LAMBDA = 0.2;
const PHI = 0.6; // ρ(k) = φ^k of the T² ratios
const P = 6;

let env: Awaited<ReturnType<typeof useTempDb>>;
let fab: Awaited<ReturnType<typeof createFab>>;
let engineer: string;

function gaussian(seed: number) {
	const rng = new XSAdd(seed);
	return () => Math.sqrt(-2 * Math.log(Math.max(rng.random(), 1e-12))) * Math.cos(2 * Math.PI * rng.random());
}

/** n consecutive wafers: x_j = 10 + 2 a_j u_t + 0.1 ε, u an AR(1) with φ₀ = √PHI and unit variance (seeded). */
function ar1Rows(n: number, seed: number, shifted: Set<number> = new Set()): Float64Array[] {
	const g = gaussian(seed);
	const phi0 = Math.sqrt(PHI);
	const a = [1, -0.8, 0.9, -1.1, 0.7, 1.2];
	let u = g();
	return Array.from({ length: n }, (_, t) => {
		if (t > 0) u = phi0 * u + Math.sqrt(1 - phi0 * phi0) * g();
		// Wafers the series must leave out sit far off (4σ on u, and a new direction for Q): were
		// they counted, their runs would push the ACF and F far up.
		const off = shifted.has(t) ? 8 : 0;
		return Float64Array.from({ length: P }, (_, j) => 10 + 2 * a[j] * u + off * a[j] + (j === 0 ? off : 0) + 0.1 * g());
	});
}

async function insertRun(chamberId: number, rows: Float64Array[], golden: (t: number) => boolean, prefix: string) {
	const ids: number[] = [];
	for (let t = 0; t < rows.length; t++) {
		const at = T0 + t * EVERY;
		const [r] = await env.k('wafer_steps')
			.insert({
				wafer_id: `${prefix}-${t}`,
				lot_id: `${prefix}-L${Math.floor(t / 25)}`, // lots of 25 (common practice)
				slot: (t % 25) + 1,
				chamber_id: chamberId,
				recipe_step_id: fab.recipeStepId,
				processed_at: at,
				golden: golden(t),
				feature_set_version: 1,
				feature_values: encodeValues(rows[t]),
				created_at: at
			})
			.returning('id');
		ids.push(typeof r === 'object' ? r.id : r);
	}
	return ids;
}

beforeAll(async () => {
	env = await useTempDb();
	fab = await createFab(env.k, { chambers: 2, features: P });
	engineer = (await createUser({ username: 'eng', displayName: 'Eng', password: 'engineer-pass', role: 'engineer' })).id;
});
afterAll(() => env.cleanup());

describe('the ACF at consecutive-wafer lags', () => {
	it('gappedAutocorrelation: Box–Jenkins r_k with nothing missing, pairs of observed values only with gaps', () => {
		const x = ar1Rows(120, 5).map((r) => r[0]);
		// Nothing missing: the Box–Jenkins estimator itself (Box, Jenkins & Reinsel 2008, ch. 2).
		const full = gappedAutocorrelation(x, 10);
		expect(full.observed).toBe(120);
		expect(Array.from(full.acf)).toEqual(Array.from(sampleAutocorrelation(x, 10)));
		// With gaps: r_k = Σ_{both observed} d_t d_{t+k} / Σ_{observed} d_t², d about the observed
		// mean, written out from the definition (derivation in the doc comment).
		const gaps = x.map((v, t) => (t % 7 === 3 || (t >= 40 && t < 55) ? NaN : v));
		const obs = gaps.filter((v) => !Number.isNaN(v));
		const m = obs.reduce((s, v) => s + v, 0) / obs.length;
		const c0 = obs.reduce((s, v) => s + (v - m) ** 2, 0);
		const g = gappedAutocorrelation(gaps, 10);
		expect(g.observed).toBe(obs.length);
		for (let k = 1; k <= 10; k++) {
			let ck = 0;
			for (let t = 0; t + k < gaps.length; t++) if (!Number.isNaN(gaps[t]) && !Number.isNaN(gaps[t + k])) ck += (gaps[t] - m) * (gaps[t + k] - m);
			expect(g.acf[k - 1]).toBeCloseTo(ck / c0, 12);
		}
		// Closing the gaps instead would change the estimate.
		expect(Math.abs(sampleAutocorrelation(obs, 10)[0] - g.acf[0])).toBeGreaterThan(1e-3);
		expect(() => gappedAutocorrelation([1, NaN, Infinity, 2], 1)).toThrow(RangeError);
		expect(() => gappedAutocorrelation([1, NaN, NaN, 2], 1)).toThrow(/3 observed/);
	});
});

describe('createDraftBaseline: F from the consecutive wafers of the training window', () => {
	const N = 600;
	const CLEAN = 300; // a wet clean just before wafer 300: wafers 300–329 are seasoning (policy default 30)
	const seasoning = new Set(Array.from({ length: 30 }, (_, i) => CLEAN + i));
	const inAlarm = new Set(Array.from({ length: 11 }, (_, i) => 450 + i)); // an open alarm over wafers 450–460
	// Golden wafers picked sparsely: every 5th wafer, none in the seasoning window or the alarm.
	const isGolden = (t: number) => t % 5 === 2 && !seasoning.has(t) && !inAlarm.has(t);
	let ids: number[];
	let ref: EwmaReference;
	let baselineId: number;

	beforeAll(async () => {
		const ch = fab.chamberIds[0];
		ids = await insertRun(ch, ar1Rows(N, 11, new Set([...seasoning, ...inAlarm])), isGolden, 'c1');
		await env.k('maintenance_events').insert({ chamber_id: ch, kind: 'wet_clean', at: T0 + CLEAN * EVERY - EVERY / 2, created_at: T0 });
		await env.k('alarms').insert({
			chamber_id: ch,
			recipe_step_id: fab.recipeStepId,
			rule: 'run',
			severity: 'warning',
			state: 'open',
			opened_at: T0 + 460 * EVERY,
			last_seen_at: T0 + 460 * EVERY,
			first_wafer_step_id: ids[450],
			last_wafer_step_id: ids[460],
			wafer_count: 11
		});
		const golden = ids.filter((_, t) => isGolden(t));
		const d = await createDraftBaseline({ chamberId: ch, recipeStepId: fab.recipeStepId, waferStepIds: golden, components: 1, builtBy: engineer });
		baselineId = d.id;
		ref = d.summary.ewmaReference!;
	});

	it('stores the source and the length of the series: the window minus seasoning and open-alarm wafers', async () => {
		const first = 2;
		const last = Math.max(...Array.from({ length: N }, (_, t) => (isGolden(t) ? t : -1)));
		let expected = 0;
		for (let t = first; t <= last; t++) if (!seasoning.has(t) && !inAlarm.has(t)) expected++;
		expect(ref.acfSource).toBe('consecutive');
		expect(ref.n).toBe(expected);
		expect(ref.t2.acf).toHaveLength(25);
		const stored = JSON.parse((await env.k('baselines').where({ id: baselineId }).first('summary_json')).summary_json);
		expect(stored.ewmaReference.acfSource).toBe('consecutive');
		expect(stored.ewmaReference.n).toBe(expected);
	});

	it('F of T² is close to Zhang’s F for the AR(1) ACF ρ(k) = φ^k, and above the golden-only F', async () => {
		// Zhang (1998) factor with the true ρ(k) = φ^k, k ≤ 25; its M → ∞ closed form is
		// (1 + φ(1 − λ)) / (1 − φ(1 − λ)) = 1.48 / 0.52 ≈ 2.85 (derivation in ewmastVarianceFactor).
		const closed = ewmastVarianceFactor(LAMBDA, Array.from({ length: 25 }, (_, k) => PHI ** (k + 1)));
		expect(closed).toBeCloseTo((1 + PHI * (1 - LAMBDA)) / (1 - PHI * (1 - LAMBDA)), 2);
		const F = ewmaChartSd(ref.t2, ref.n, LAMBDA).inflation!.factor;
		// ~550 wafers: the sample F lands within 20 % of the truth (the estimate is biased low by the
		// cutoff at the first r_k ≤ 0 and by O(1/n) in each r_k).
		expect(Math.abs(F - closed) / closed).toBeLessThan(0.2);
		// The golden-only F (what baselines kept before): the golden wafers' cross-validated ratios
		// see ρ(5) = 0.6^5 ≈ 0.08 as their lag 1, so their F is close to 1.
		const goldenRows = await getWaferStepsByIds(ids.filter((_, t) => isGolden(t)));
		const cv = crossValidatedScores(goldenRows.map((w) => w.values), await getModel(baselineId), 5);
		const Fgolden = ewmaInflation(LAMBDA, sampleAutocorrelation(cv.t2Ratio, 25), goldenRows.length).factor;
		expect(F).toBeGreaterThan(Fgolden + 0.8);
		// The level stays the golden wafers' cross-validated one.
		const mean = cv.t2Ratio.reduce((s, v) => s + v, 0) / cv.t2Ratio.length;
		expect(ref.t2.mean).toBeCloseTo(mean, 12);
		// Q carries only independent noise: F near 1 (independent data gives √F ≈ 1.06 on average,
		// tests/unit/monitoring/ewma-autocorrelation-mc.test.ts).
		expect(ewmaChartSd(ref.q, ref.n, LAMBDA).inflation!.factor).toBeLessThan(1.4);
	});
});

describe('fallback to the golden ACF', () => {
	it(`a window with fewer than ${CONSECUTIVE_ACF_MIN} in-control wafers keeps the golden wafers' ACF`, async () => {
		const ch = fab.chamberIds[1];
		const rows = ar1Rows(45, 21);
		const ids = await insertRun(ch, rows, (t) => t % 9 !== 4, 'c2'); // 40 golden of 45 wafers
		const golden = ids.filter((_, t) => t % 9 !== 4);
		const d = await createDraftBaseline({ chamberId: ch, recipeStepId: fab.recipeStepId, waferStepIds: golden, components: 1, builtBy: engineer });
		const ref = d.summary.ewmaReference!;
		expect(ref.acfSource).toBe('golden');
		expect(ref.n).toBe(40);
		const cv = crossValidatedScores(golden.map((_, i) => rows[ids.indexOf(golden[i])]), await getModel(d.id), 5);
		const acf = sampleAutocorrelation(cv.t2Ratio, 25);
		for (let k = 0; k < 25; k++) expect(ref.t2.acf![k]).toBeCloseTo(acf[k], 12);
	});

	it('a fleet baseline (no one chamber’s run) keeps the golden ACF', async () => {
		const golden = (await env.k('wafer_steps').where({ golden: true }).orderBy('processed_at').limit(60).pluck('id')) as number[];
		const d = await createDraftBaseline({ scope: 'fleet', chamberId: null, recipeStepId: fab.recipeStepId, waferStepIds: golden, components: 1, builtBy: engineer });
		expect(d.summary.ewmaReference!.acfSource).toBe('golden');
		expect(d.summary.ewmaReference!.n).toBe(60);
	});
});
