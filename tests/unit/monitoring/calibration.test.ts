import { describe, expect, it } from 'vitest';
import {
	beyondLimit,
	cubeRootLaw,
	cubeRootPredictionLimit,
	featureResolution,
	fitBaseline,
	fitBaselineDetailed,
	goldenSetWarnings,
	phaseOne,
	phaseOneT2Limit,
	scoreBatch,
	scoreWafer,
	type BaselineModel
} from '../../../src/lib/monitoring/index.ts';
import { draw, makeLaw, meanSd, rowsOf } from '../../../bench/calibration-law.ts';
import { backgroundBand, cell } from '../../../bench/calibration.ts';

// CI-fast corners of the calibration grid of bench/calibration.ts (run that for the full grid of
// n ∈ {20, 30, 50, 100, 300} × p ∈ {12, 60, 250, 1,000}, 50 golden sets a cell; figures in
// src/lib/monitoring/README.md). Seeded, so every run is the same. The in-control law (correlated
// factor data, our invention) is bench/calibration-law.ts. The claim checked: averaged over golden
// sets, the share of new in-control wafers beyond the limit at α = 1 % lies in [0.6 %, 1.6 %] for T²,
// Q and the combined state (issue 11's acceptance band; the exact-on-average reference is the F limit
// of Tracy, Young & Mason 1992, whose own average over sets is α).
const ALPHA = 0.01;
const NEW = 400;
const names = (p: number) => Array.from({ length: p }, (_, j) => `ch${j}`);

function rates(n: number, p: number, sets: number, seed: number, limits: 'cross-validated' | 'theory') {
	const out = cell(n, p, sets, seed, limits, NEW);
	const pct = (x: { mean: number; sd: number }) => `${(100 * x.mean).toFixed(2)} % (sd over sets ${(100 * x.sd).toFixed(2)})`;
	console.log(`n = ${n}, p = ${p}, ${sets} sets, ${limits}: T² ${pct(out.t2)}, Q ${pct(out.q)}, state ${pct(out.state)}`);
	return out;
}

describe('cross-validated limits at golden sizes fabs have (seeded Monte Carlo)', () => {
	const corners: [number, number][] = [
		[20, 12],
		[30, 1000],
		[100, 60]
	];
	for (const [n, p] of corners) {
		it(`n = ${n}, p = ${p}: T², Q and the combined state each beyond limit on 0.6–1.6 % of in-control wafers`, () => {
			const r = rates(n, p, 30, 1000 * n + p, 'cross-validated');
			for (const x of [r.t2, r.q, r.state]) {
				expect(x.mean).toBeGreaterThanOrEqual(0.006);
				expect(x.mean).toBeLessThanOrEqual(0.016);
			}
		});
	}

	it('the large-sample limits fail the same check at n = 20, p = 250 (Q far too tight) — the reason for the change', () => {
		const r = rates(20, 250, 15, 20250, 'theory');
		expect(r.q.mean).toBeGreaterThan(0.03);
		expect(r.state.mean).toBeGreaterThan(0.016);
	});

	// The band on the three adjacent channels with the least process signal (where a new species' band
	// lands). On channels drawn at random, which mostly carry strong process signal, 10 noise-σ is
	// about 2.5 total-σ and the power is far lower for any limit: README.md gives both figures.
	it('power at n = 30, p = 1,000: a 3-channel band of 10 noise-σ on background channels is beyond the Q limit on ≥ 50 % of wafers', () => {
		const n = 30;
		const p = 1000;
		const detected: number[] = [];
		for (let s = 0; s < 12; s++) {
			const law = makeLaw(p, 424242 + 104729 * s);
			const model = fitBaseline(rowsOf(draw(law, n), p), { featureNames: names(p), components: 3, alpha: ALPHA });
			const x = draw(law, 200);
			const j0 = backgroundBand(law);
			for (let i = 0; i < 200; i++) for (let j = j0; j < j0 + 3; j++) x[i * p + j] += 10 * law.sigma[j];
			const r = scoreBatch(model, x);
			detected.push(r.q.filter((v) => v > model.limits.q).length / 200);
		}
		const m = meanSd(detected);
		console.log(`power n = 30, p = 1000, band of 10 noise-σ on 3 channels: Q ${(100 * m.mean).toFixed(1)} % (sd over sets ${(100 * m.sd).toFixed(1)})`);
		expect(m.mean).toBeGreaterThanOrEqual(0.5);
	});
});

describe('Phase I screening of a golden set (seeded Monte Carlo)', () => {
	it('the Beta limit of a golden wafer\'s own T² matches scipy (Tracy, Young & Mason 1992)', () => {
		// scipy 1.17.1: 19**2/20 * beta.ppf(0.99, 1.5, 8) and beta.ppf(0.995, 1.5, 8)
		expect(phaseOneT2Limit(20, 3, 0.01)).toBeCloseTo(8.990074592463317, 9);
		expect(phaseOneT2Limit(20, 3, 0.005)).toBeCloseTo(9.777335202611512, 9);
		expect(() => phaseOneT2Limit(5, 4, 0.01)).toThrow(RangeError);
	});

	it('n = 20, k = 3, p = 12: a golden wafer with one channel 5σ out is flagged in ≥ 80 % of sets; clean wafers about n·α/… by chance', () => {
		const n = 20;
		const p = 12;
		const sets = 60;
		let hit = 0;
		let hitFactor = 0;
		let falseFlags = 0;
		for (let s = 0; s < sets; s++) {
			const law = makeLaw(p, 555 + s);
			const x = draw(law, n);
			const j = s % p;
			const sdj = Math.sqrt(law.sigma[j] ** 2 + law.W.reduce((a, w) => a + w[j] ** 2, 0));
			x[7 * p + j] += 5 * sdj;
			const f = fitBaselineDetailed(rowsOf(x, p), { featureNames: names(p), components: 3 });
			const r = phaseOne(rowsOf(x, p), f.model, f.crossValidation!.q);
			if (r.flagged.includes(7)) hit++;
			falseFlags += r.flagged.filter((i) => i !== 7).length;
			expect(r.expectedFalseFlags).toBeCloseTo(n * 0.01, 12);
			// 5 factor-σ along the leading factor: a T² outlier, judged by the Beta limit.
			const y = draw(law, n);
			for (let jj = 0; jj < p; jj++) y[7 * p + jj] += 5 * law.W[0][jj];
			const g = fitBaselineDetailed(rowsOf(y, p), { featureNames: names(p), components: 3 });
			if (phaseOne(rowsOf(y, p), g.model, g.crossValidation!.q).flagged.includes(7)) hitFactor++;
		}
		console.log(`Phase I n = 20, k = 3, p = 12, ${sets} sets: channel outlier flagged ${((100 * hit) / sets).toFixed(0)} %, factor outlier ${((100 * hitFactor) / sets).toFixed(0)} %, other wafers flagged ${(falseFlags / sets).toFixed(2)} a set (n·α = 0.2)`);
		expect(hit / sets).toBeGreaterThanOrEqual(0.8);
		expect(hitFactor / sets).toBeGreaterThanOrEqual(0.65);
		expect(falseFlags / sets).toBeLessThanOrEqual(0.4);
	});

	it('a flagged wafer says why, and one wafer never widens its own Q limit', () => {
		const law = makeLaw(12, 9);
		const x = draw(law, 25);
		x[3 * 12 + 5] += 40 * law.sigma[5];
		const f = fitBaselineDetailed(rowsOf(x, 12), { featureNames: names(12), components: 3 });
		const r = phaseOne(rowsOf(x, 12), f.model, f.crossValidation!.q);
		expect(r.flagged).toContain(3);
		expect(r.wafers[3].reasons.join(' ')).toMatch(/Q .* above/);
		expect(r.wafers[3].qLimit).toBeLessThan(r.wafers[3].q);
		expect(() => phaseOne(rowsOf(x, 12), f.model, f.crossValidation!.q.subarray(1))).toThrow(/one out-of-sample Q per golden wafer/);
	});
});

describe('golden-set warnings', () => {
	const day = 24 * 3_600_000;
	it('too few wafers for k (n < max(20, 5k)), one lot, a short span, k = 1 with many features', () => {
		const w = goldenSetWarnings({ n: 12, k: 3, p: 40, lots: ['L1'], times: [0, 3_600_000] });
		expect(w.some((s) => /Only 12 golden wafers .* max\(20, 5k\) = 20/.test(s))).toBe(true);
		expect(w.some((s) => /one lot/.test(s))).toBe(true);
		expect(w.some((s) => /span only 1\.0 hours/.test(s))).toBe(true);
		const k1 = goldenSetWarnings({ n: 40, k: 1, p: 200, lots: ['A', 'B', 'C'], times: [0, 3 * day] });
		expect(k1).toHaveLength(1);
		expect(k1[0]).toMatch(/One component for 200 features/);
		expect(goldenSetWarnings({ n: 25, k: 6, p: 200, lots: ['A', 'B', 'C'], times: [0, 3 * day] })).toEqual([
			expect.stringMatching(/^Only 25 golden wafers for 6 components: at least max\(20, 5k\) = 30/)
		]);
		expect(goldenSetWarnings({ n: 30, k: 6, p: 200, lots: ['A', 'B', 'C'], times: [0, 3 * day] })).toEqual([]);
	});
	it('a well-spread set gets none', () => {
		expect(goldenSetWarnings({ n: 40, k: 3, p: 200, lots: ['A', 'B', 'C'], times: [0, 3 * day], flagged: 1, expectedFalseFlags: 0.4 })).toEqual([]);
	});
});

describe('building blocks', () => {
	it('cube-root prediction limit matches scipy; the law refuses too few or constant values', () => {
		// scipy 1.17.1: (2 + t.ppf(0.99, 10) * 0.1 * sqrt(1 + 2/21))**3
		expect(cubeRootPredictionLimit({ mean: 2, sd: 0.1, n: 21, nu: 10 }, 0.01)).toBeCloseTo(11.997012661562591, 9);
		expect(cubeRootLaw([1, 8, 27])).toEqual({ mean: 2, sd: 1, n: 3, nu: 1 });
		expect(() => cubeRootLaw([1, 1, 1])).toThrow(/do not vary/);
		expect(() => cubeRootLaw([1, 2])).toThrow(/at least 3/);
	});
	it('feature resolution: smallest step between golden values, else the last written decimal', () => {
		expect(featureResolution([400, 401, 400, 403])).toBe(1);
		expect(featureResolution([12.25, 12.25])).toBeCloseTo(0.01, 15);
		expect(featureResolution([750, 750])).toBe(1);
		expect(featureResolution([1.5e-7])).toBeCloseTo(1e-8, 20);
	});
	it('state: alarm beyond the α/2 (Bonferroni) limits, warning beyond an α limit only; older models keep the any-ratio rule', () => {
		const law = makeLaw(12, 3);
		const m = fitBaseline(rowsOf(draw(law, 40), 12), { featureNames: names(12), components: 3 });
		expect(m.limits.qState!).toBeGreaterThan(m.limits.q);
		expect(m.limits.t2State!).toBeGreaterThan(m.limits.t2);
		const between = (m.limits.q + m.limits.qState!) / 2;
		expect(beyondLimit(m, 0, between, 0)).toBe(false);
		const old: BaselineModel = { ...m, limits: { ...m.limits, t2State: undefined, qState: undefined } };
		expect(beyondLimit(old, 0, between, 0)).toBe(true);
		const x = draw(law, 1);
		const s = scoreWafer(m, x);
		const big = { t2: s.t2 * 2 + 1, t2State: s.t2 * 3 + 1, phi: 1e9, phiWarning: 1e9, t2Warning: s.t2 * 2 + 1 };
		const warn = scoreWafer({ ...m, limits: { ...m.limits, ...big, q: s.q / 1.01, qWarning: s.q / 1.01, qState: s.q * 1.5 } }, x);
		expect(warn.qRatio).toBeGreaterThan(1);
		expect(warn.stateRatio).toBeLessThan(1);
		expect(warn.state).toBe('warning');
		const alarm = scoreWafer({ ...m, limits: { ...m.limits, ...big, q: s.q / 2, qWarning: s.q / 2, qState: s.q / 1.5 } }, x);
		expect(alarm.state).toBe('alarm');
	});
});
