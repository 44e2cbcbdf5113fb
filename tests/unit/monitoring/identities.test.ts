import { describe, expect, it } from 'vitest';
import {
	brokenStickComponents,
	contributions,
	cubeRootPredictionLimit,
	fitBaseline,
	qLimitBox,
	qLimitJacksonMudholkar,
	qLimitThreeMoment,
	scoreBatch,
	scoreWafer,
	t2Limit,
	type BaselineModel
} from '../../../src/lib/monitoring';
import { seededNormal } from './helpers';

/** n rows of p variables driven by f latent factors plus noise, on varied offsets and units. */
function latent(seed: number, n: number, p: number, f: number, noise: number): number[][] {
	const g = seededNormal(seed);
	const W = Array.from({ length: f }, () => Array.from({ length: p }, g));
	const unit = Array.from({ length: p }, (_, j) => 0.5 + (j % 7));
	return Array.from({ length: n }, () => {
		const t = Array.from({ length: f }, g);
		return Array.from({ length: p }, (_, j) => 100 + j + unit[j] * (t.reduce((s, tv, a) => s + tv * W[a][j], 0) + noise * g()));
	});
}
const names = (p: number) => Array.from({ length: p }, (_, j) => `ch${j}`);
const sum = (r: Record<string, number>) => Object.values(r).reduce((a, b) => a + b, 0);

describe('identities of the PCA statistics', () => {
	const rows = latent(1, 80, 12, 3, 0.3);
	const model = fitBaseline(rows, { featureNames: names(12), components: 3 });
	const fresh = latent(2, 5, 12, 3, 0.6);

	it('Q contributions e_j² sum to Q (Westerhuis et al. 2000; Alcala & Qin 2011)', () => {
		for (const x of fresh) {
			const s = scoreWafer(model, x);
			expect(sum(contributions(model, x, 'q').q)).toBeCloseTo(s.q, 10);
			expect(Math.abs(sum(contributions(model, x, 'complete').q) / s.q - 1)).toBeLessThan(1e-12);
		}
	});

	it('complete-decomposition T² contributions sum to T² (Alcala & Qin 2011)', () => {
		for (const x of fresh) {
			const s = scoreWafer(model, x);
			expect(Math.abs(sum(contributions(model, x, 'complete').t2!) / s.t2 - 1)).toBeLessThan(1e-12);
		}
	});

	it('mean T² of the golden wafers is k(n − 1)/n and mean Q is θ1(n − 1)/n (follows from λ_a = Σ t_ia² / (n − 1))', () => {
		const s = scoreBatch(model, rows);
		const n = rows.length;
		const meanT2 = s.t2.reduce((a, b) => a + b, 0) / n;
		const meanQ = s.q.reduce((a, b) => a + b, 0) / n;
		expect(Math.abs(meanT2 / ((3 * (n - 1)) / n) - 1)).toBeLessThan(1e-10);
		expect(Math.abs(meanQ / ((model.residual.theta1 * (n - 1)) / n) - 1)).toBeLessThan(1e-10);
	});

	it('a point in the model plane has Q = 0 (to rounding)', () => {
		const t = [1.5, -2, 0.7];
		const x = Array.from({ length: model.p }, (_, j) => {
			let z = 0;
			for (let a = 0; a < 3; a++) z += model.loadings[j * 3 + a] * t[a];
			return model.mean[j] + model.scale[j] * z;
		});
		const s = scoreWafer(model, x);
		expect(s.q).toBeLessThan(1e-20);
		expect(s.t2).toBeCloseTo(t.reduce((acc, v, a) => acc + (v * v) / model.eigenvalues[a], 0), 10);
	});

	it('autoscaled statistics do not change when a feature changes units or offset', () => {
		const a = (j: number) => (j % 2 ? -3.7 : 1000 / (j + 1));
		const conv = (r: number[]) => r.map((v, j) => a(j) * v + 17 * j);
		const m2 = fitBaseline(rows.map(conv), { featureNames: names(12), components: 3 });
		expect(Math.abs(m2.limits.q / model.limits.q - 1)).toBeLessThan(1e-9);
		for (const x of fresh) {
			const s1 = scoreWafer(model, x);
			const s2 = scoreWafer(m2, conv(x));
			expect(Math.abs(s2.t2 / s1.t2 - 1)).toBeLessThan(1e-9);
			expect(Math.abs(s2.q / s1.q - 1)).toBeLessThan(1e-9);
		}
	});

	it('Gram and SVD routes agree, for n > p and for n < p', () => {
		const wide = latent(3, 30, 90, 4, 0.4);
		for (const [data, p] of [
			[rows, 12],
			[wide, 90]
		] as const) {
			const g = fitBaseline(data, { featureNames: names(p), components: 3, route: 'gram' });
			const s = fitBaseline(data, { featureNames: names(p), components: 3, route: 'svd' });
			for (let a = 0; a < g.eigenvalues.length; a++)
				expect(Math.abs(g.eigenvalues[a] - s.eigenvalues[a]) / g.eigenvalues[0]).toBeLessThan(1e-12);
			const x = latent(4, 1, p, 4, 1)[0];
			const sg = scoreWafer(g, x);
			const ss = scoreWafer(s, x);
			expect(Math.abs(sg.t2 / ss.t2 - 1)).toBeLessThan(1e-9);
			expect(Math.abs(sg.q / ss.q - 1)).toBeLessThan(1e-9);
		}
	});

	it('batch scoring equals one-by-one scoring, for arrays and for a flat buffer', () => {
		const b = scoreBatch(model, fresh);
		const flat = scoreBatch(model, Float64Array.from(fresh.flat()));
		fresh.forEach((x, i) => {
			const s = scoreWafer(model, x);
			expect(b.t2[i]).toBe(s.t2);
			expect(b.q[i]).toBe(s.q);
			expect(flat.phi[i]).toBe(s.phi);
		});
	});

	it('ratios are statistic ÷ limit and the state follows them', () => {
		const s = scoreWafer(model, fresh[0]);
		expect(s.t2Ratio).toBe(s.t2 / model.limits.t2);
		expect(s.qRatio).toBe(s.q / model.limits.q);
		const far = scoreWafer(model, fresh[0].map((v, j) => v + (j === 4 ? 50 * model.sd[4] : 0)));
		expect(far.state).toBe('alarm');
	});
});

describe('limit formulas', () => {
	it('Box limit with equal residual eigenvalues is exactly a χ² quantile: g = 1, h = m (Box 1954)', () => {
		// χ²_0.05(4) = 9.488 (NIST e-Handbook table 1.3.6.7.4, from memory)
		expect(qLimitBox([1, 1, 1, 1], 0.05)).toBeCloseTo(9.4877, 4);
	});
	it('Jackson–Mudholkar and Box agree closely for many equal residual eigenvalues', () => {
		const tail = new Array(40).fill(0.5);
		expect(Math.abs(qLimitJacksonMudholkar(tail, 0.01) / qLimitBox(tail, 0.01) - 1)).toBeLessThan(0.005);
	});
	it('T² limit tends to χ²_α(k) as n grows (Tracy, Young & Mason 1992)', () => {
		// χ²_0.01(3) = 11.345 (NIST table 1.3.6.7.4, from memory)
		expect(t2Limit(3, 1_000_000, 0.01)).toBeCloseTo(11.345, 2);
		expect(() => t2Limit(5, 6, 0.01)).toThrow(RangeError);
	});
	it('broken-stick rule keeps components above the broken-stick expectation (Frontier 1976)', () => {
		expect(brokenStickComponents([5, 3, 0.5, 0.3, 0.2], 50)).toBe(2);
		expect(brokenStickComponents([1, 1, 1, 1, 1], 50)).toBe(1);
	});
	it('scaling "none" keeps raw units and Pareto divides by √sd (van den Berg et al. 2006)', () => {
		const data = latent(6, 40, 6, 2, 0.3);
		const raw = fitBaseline(data, { featureNames: names(6), scaling: 'none', components: 2 });
		const par = fitBaseline(data, { featureNames: names(6), scaling: 'pareto', components: 2 });
		expect(Array.from(raw.scale)).toEqual(new Array(6).fill(1));
		par.scale.forEach((s, j) => expect(s).toBeCloseTo(Math.sqrt(par.sd[j]), 14));
		// with no scaling the eigenvalues sum to the total raw variance
		const total = Array.from(raw.sd).reduce((a, s) => a + s * s, 0);
		expect(raw.eigenvalues.reduce((a, b) => a + b, 0) / total).toBeCloseTo(1, 12);
		expect(raw.componentsRule).toBe('fixed');
		expect(fitBaseline(data, { featureNames: names(6) }).componentsRule).toBe('broken-stick');
	});
	it('a model records everything needed to recompute its limits', () => {
		const m: BaselineModel = fitBaseline(latent(5, 40, 8, 2, 0.3), { featureNames: names(8), limits: 'theory' });
		expect(m.limits.t2).toBe(t2Limit(m.k, m.n, m.alpha));
		expect(m.limits.q).toBe(qLimitJacksonMudholkar(m.eigenvalues.subarray(m.k), m.alpha));
		expect(m.limits.t2State).toBe(t2Limit(m.k, m.n, m.alpha / 2));
		expect(m.explainedVariance.reduce((a, b) => a + b, 0)).toBeCloseTo(1, 12);
		expect(m.limitCalibration).toBe('theory');
	});
	it('a cross-validated model records the laws its limits come from', () => {
		const m: BaselineModel = fitBaseline(latent(5, 30, 8, 2, 0.3), { featureNames: names(8) });
		const cv = m.crossValidation!;
		expect(m.limitCalibration).toBe('cross-validated');
		expect(cv.folds).toBe(30); // leave-one-out up to 40 wafers
		// n > p: the wider of the cube-root limit and the scaled three-moment law of the residual eigenvalues.
		const tail = m.eigenvalues.subarray(m.k);
		const qAt = (a: number) => Math.max(cubeRootPredictionLimit(cv.q, a), cv.q.shapeScale! * qLimitThreeMoment(tail, a));
		expect(m.limits.q).toBe(qAt(m.alpha));
		expect(m.limits.qState).toBe(qAt(m.alpha / 2));
		expect(m.limits.t2).toBeCloseTo(cv.t2.factor * t2Limit(m.k, m.n, m.alpha), 12);
		expect(cv.t2.factor).toBeLessThanOrEqual(1);
		expect(m.limitMethod).toMatch(/leave-one-out/);
	});
});
