import { describe, expect, it } from 'vitest';
import { fitBaseline, qLimitBox, qLimitThreeMoment, scoreBatch } from '../../../src/lib/monitoring';
import { seededNormal } from './helpers';

// Monte Carlo check of the false-alarm rates at α = 0.01 (seeded, so every run is the same).
// Law: 20 variables = 3 strong latent factors (sd 5, 3, 2) through fixed loadings, plus independent
// noise of sd 0.3. 200 golden sets of n = 200, each fitted with k = 3 (autoscale) and scored on 1,000
// new samples from the same law.
// Expectations: the F-based T² limit (Tracy, Young & Mason 1992) gives exactly α for a future
// observation on average over golden sets, not for each set (one set can be off by ±0.5 points),
// hence [0.85 %, 1.15 %] for the average; the Q limit (Jackson & Mudholkar 1979) is an
// approximation, hence [0.5 %, 1.5 %].
const P = 20;
const K = 3;
const SETS = 200;
const N = 200;
const NEW = 1000;
const ALPHA = 0.01;
const names = Array.from({ length: P }, (_, j) => `x${j}`);

interface Rates {
	mean: number;
	sd: number;
	min: number;
	max: number;
}
function summary(v: number[]): Rates {
	const mean = v.reduce((a, b) => a + b, 0) / v.length;
	const sd = Math.sqrt(v.reduce((a, b) => a + (b - mean) ** 2, 0) / (v.length - 1));
	return { mean, sd, min: Math.min(...v), max: Math.max(...v) };
}
const pct = (x: number) => (100 * x).toFixed(3) + ' %';
const show = (r: Rates) => `mean ${pct(r.mean)}, sd over sets ${pct(r.sd)}, range [${pct(r.min)}, ${pct(r.max)}]`;

function simulate(seed: number, loading: (g: () => number, factorSd: number) => number, label: string) {
	const g = seededNormal(seed);
	const W = [5, 3, 2].map((s) => Array.from({ length: P }, () => loading(g, s)));
	const draw = (m: number): Float64Array => {
		const out = new Float64Array(m * P);
		const t = new Float64Array(K);
		for (let i = 0; i < m; i++) {
			for (let a = 0; a < K; a++) t[a] = g();
			for (let j = 0; j < P; j++) {
				let v = 0.3 * g();
				for (let a = 0; a < K; a++) v += W[a][j] * t[a];
				out[i * P + j] = v;
			}
		}
		return out;
	};
	const t2: number[] = [];
	const qJm: number[] = [];
	const qBox: number[] = [];
	const q3: number[] = [];
	let h0 = 0;
	for (let s = 0; s < SETS; s++) {
		const golden = draw(N);
		const rows = Array.from({ length: N }, (_, i) => golden.subarray(i * P, (i + 1) * P));
		// The large-sample formulas are what this file checks (their calibration at n = 200 stays a
		// reference); the cross-validated limits are checked in calibration.test.ts.
		const model = fitBaseline(rows, { featureNames: names, components: K, alpha: ALPHA, limits: 'theory' });
		const boxLimit = qLimitBox(model.eigenvalues.subarray(K), ALPHA);
		const threeLimit = qLimitThreeMoment(model.eigenvalues.subarray(K), ALPHA);
		h0 += model.residual.h0 / SETS;
		const r = scoreBatch(model, draw(NEW));
		let a = 0;
		let b = 0;
		let c = 0;
		let d = 0;
		for (let i = 0; i < NEW; i++) {
			if (r.t2[i] > model.limits.t2) a++;
			if (r.q[i] > model.limits.q) b++;
			if (r.q[i] > boxLimit) c++;
			if (r.q[i] > threeLimit) d++;
		}
		t2.push(a / NEW);
		qJm.push(b / NEW);
		qBox.push(c / NEW);
		q3.push(d / NEW);
	}
	const out = { t2: summary(t2), qJm: summary(qJm), qBox: summary(qBox), q3: summary(q3), h0 };
	console.log(
		`Monte Carlo ${label} (${SETS} sets × n=${N} × ${NEW} new, p=${P}, k=${K}, α=${ALPHA}, mean h0 ${h0.toFixed(3)}):\n` +
			`  T²                    ${show(out.t2)}\n  Q J–M 1979 (default)  ${show(out.qJm)}\n  Q Box 1954            ${show(out.qBox)}\n  Q three-moment        ${show(out.q3)}`
	);
	return out;
}

describe('Monte Carlo false-alarm rates (seeded)', () => {
	// Every variable carries every factor (|loading| between 0.5 and 1.5 factor sd): the noise is
	// small against each variable's signal, as the law asks.
	const main = simulate(19590101, (g, s) => {
		const u = g();
		return s * Math.sign(u) * (0.5 + (Math.abs(u) % 1));
	}, 'A: every variable loads on the factors');

	it('T² false-alarm rate averaged over the golden sets lies in [0.85 %, 1.15 %]', () => {
		expect(main.t2.mean).toBeGreaterThanOrEqual(0.0085);
		expect(main.t2.mean).toBeLessThanOrEqual(0.0115);
	});
	it('Q false-alarm rate (Jackson–Mudholkar) averaged over the golden sets lies in [0.5 %, 1.5 %]', () => {
		expect(main.qJm.mean).toBeGreaterThanOrEqual(0.005);
		expect(main.qJm.mean).toBeLessThanOrEqual(0.015);
		expect(main.h0).toBeGreaterThan(0);
	});

	// Gaussian loadings: some variables are nearly pure noise, so after autoscaling a few residual
	// eigenvalues dominate, h0 falls near 0 and the two Q approximations part ways. T² stays exact.
	const spread = simulate(19590101, (g, s) => s * g(), 'B: Gaussian loadings, some variables mostly noise');
	it('T² stays exact on average when the residual spectrum is very uneven', () => {
		expect(spread.t2.mean).toBeGreaterThanOrEqual(0.0085);
		expect(spread.t2.mean).toBeLessThanOrEqual(0.0115);
	});
	it('with h0 near 0, Box errs on the loud side; Jackson–Mudholkar (three-moment form where h0 ≤ 0) stays closer to α', () => {
		expect(Math.abs(spread.h0)).toBeLessThan(0.1);
		expect(spread.qBox.mean).toBeGreaterThan(0.015);
		expect(spread.qJm.mean).toBeLessThan(spread.qBox.mean);
	});
});
