import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { bartlettStandardErrors, sampleAutocorrelation } from '../../../src/lib/monitoring';
import { seededNormal } from './helpers';

const reference = JSON.parse(
	readFileSync(new URL('../../reference/reference-acf.json', import.meta.url), 'utf8')
) as {
	cases: { name: string; series: number[]; acf: number[]; bartlettSe: number[] }[];
};

describe('sample autocorrelation r_k = Σ(x_t − x̄)(x_{t+k} − x̄) / Σ(x_t − x̄)² (Box, Jenkins & Reinsel 2008, ch. 2)', () => {
	it('1, 2, 3, 4, 5: r_1 = 4/10, r_2 = −1/10 (hand computation with the estimator above)', () => {
		const r = sampleAutocorrelation([1, 2, 3, 4, 5], 2);
		expect(r[0]).toBeCloseTo(0.4, 15);
		expect(r[1]).toBeCloseTo(-0.1, 15);
	});
	it('an alternating series: r_1 = −(n − 1)/n, r_2 = (n − 2)/n (hand computation)', () => {
		const r = sampleAutocorrelation([1, -1, 1, -1, 1, -1, 1, -1], 2);
		expect(r[0]).toBeCloseTo(-7 / 8, 15);
		expect(r[1]).toBeCloseTo(6 / 8, 15);
	});
	for (const c of reference.cases)
		it(`${c.name}: r_1 … r_25 agree with numpy (np.correlate, tests/reference/make_acf_reference.py) to 1e-12`, () => {
			const r = sampleAutocorrelation(c.series, 25);
			for (let k = 0; k < 25; k++) expect(Math.abs(r[k] - c.acf[k])).toBeLessThan(1e-12);
		});
	for (const c of reference.cases)
		it(`${c.name}: Bartlett (1946) standard errors agree with numpy to 1e-12`, () => {
			const se = bartlettStandardErrors(c.acf, c.series.length);
			for (let k = 0; k < 25; k++) expect(Math.abs(se[k] - c.bartlettSe[k])).toBeLessThan(1e-12);
		});
	it('a long AR(1) series: r_k → φ^k (Box, Jenkins & Reinsel 2008, ch. 3, ACF of the AR(1) process), within 4 Bartlett se', () => {
		const g = seededNormal(11);
		const phi = 0.6;
		const n = 20_000;
		const x = new Float64Array(n);
		x[0] = g() / Math.sqrt(1 - phi * phi);
		for (let t = 1; t < n; t++) x[t] = phi * x[t - 1] + g();
		const r = sampleAutocorrelation(x, 5);
		const se = bartlettStandardErrors(r, n);
		for (let k = 1; k <= 5; k++) expect(Math.abs(r[k - 1] - phi ** k)).toBeLessThan(4 * se[k - 1]);
	});
	it('refuses what has no autocorrelation', () => {
		expect(() => sampleAutocorrelation([1, 2], 1)).toThrow(/at least 3/);
		expect(() => sampleAutocorrelation([2, 2, 2, 2], 1)).toThrow(/constant/);
		expect(() => sampleAutocorrelation([1, NaN, 2, 3], 1)).toThrow(/not finite/);
		expect(() => sampleAutocorrelation([1, 2, 3, 4], 4)).toThrow(/maxLag/);
		expect(() => sampleAutocorrelation([1, 2, 3, 4], 0)).toThrow(/maxLag/);
		expect(() => bartlettStandardErrors([0.1], 0)).toThrow(/positive integer/);
		expect(() => bartlettStandardErrors([NaN], 10)).toThrow(/not finite/);
	});
});
