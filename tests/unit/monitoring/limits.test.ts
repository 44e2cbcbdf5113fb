import { describe, expect, it } from 'vitest';
import {
	normalUpper,
	qLimit,
	qLimitBox,
	qLimitJacksonMudholkar,
	qLimitThreeMoment,
	residualMoments
} from '../../../src/lib/monitoring';
import { seededNormal } from './helpers';

// The Q limits approximate the upper quantile of Q = Σ λ_a χ²₁ (Jackson & Mudholkar 1979, eq. 3.1).
// Here that quantile is checked by simulation (seeded, 200,000 draws: the binomial standard error of
// a 1 % tail rate is 0.022 points, so ±0.1 point is a 4.5σ band).
const DRAWS = 200_000;
const ALPHA = 0.01;

function tailRate(lambda: number[], limit: number, seed: number): number {
	const g = seededNormal(seed);
	let over = 0;
	for (let i = 0; i < DRAWS; i++) {
		let q = 0;
		for (const l of lambda) {
			const z = g();
			q += l * z * z;
		}
		if (q > limit) over++;
	}
	return over / DRAWS;
}

const spectra: Array<[string, number[]]> = [
	['equal (h0 = 1/3)', new Array(20).fill(0.5)],
	['one large, 16 medium (h0 ≈ +0.07)', [1, ...new Array(16).fill(0.3)]],
	['one large, 40 small (h0 ≈ −0.28)', [1, ...new Array(40).fill(0.02)]]
];

describe('Q limits against a simulated Σ λ χ²₁ quantile', () => {
	it.each(spectra)('three-moment limit (Imhof 1961 §4) holds α for %s', (_name, lambda) => {
		const r = tailRate(lambda, qLimitThreeMoment(lambda, ALPHA), 1);
		expect(r).toBeGreaterThan(0.009);
		expect(r).toBeLessThan(0.011);
	});

	it('Jackson–Mudholkar holds α when h0 is well above 0', () => {
		const lambda = spectra[0][1];
		const r = tailRate(lambda, qLimitJacksonMudholkar(lambda, ALPHA), 2);
		expect(r).toBeGreaterThan(0.009);
		expect(r).toBeLessThan(0.011);
	});

	it('for h0 ≤ 0 the textbook Jackson–Mudholkar form fails, so the engine uses the three-moment form', () => {
		const lambda = spectra[2][1];
		const { theta1: t1, theta2: t2, h0 } = residualMoments(lambda);
		expect(h0).toBeLessThan(0);
		const z = normalUpper(ALPHA);
		const textbook = t1 * Math.pow((z * Math.sqrt(2 * t2 * h0 * h0)) / t1 + 1 + (t2 * h0 * (h0 - 1)) / (t1 * t1), 1 / h0);
		expect(tailRate(lambda, textbook, 3)).toBeGreaterThan(0.2); // a limit below the mean of Q
		expect(qLimitJacksonMudholkar(lambda, ALPHA)).toBe(qLimitThreeMoment(lambda, ALPHA));
		// Box's two-moment form is liberal here (more false alarms than α)
		expect(tailRate(lambda, qLimitBox(lambda, ALPHA), 4)).toBeGreaterThan(0.014);
	});

	it('all three agree exactly with χ² when the eigenvalues are equal (g = 1 for λ = 1)', () => {
		// χ²_0.05(4) = 9.488 (NIST e-Handbook table 1.3.6.7.4, from memory)
		expect(qLimitBox([1, 1, 1, 1], 0.05)).toBeCloseTo(9.4877, 4);
		expect(qLimitThreeMoment([1, 1, 1, 1], 0.05)).toBeCloseTo(9.4877, 4);
		expect(qLimit([1, 1, 1, 1], 0.05, 'jackson-mudholkar')).toBeCloseTo(9.456, 3);
	});

	it('refuses a bad method, a negative eigenvalue and an empty residual space', () => {
		expect(() => qLimit([1, 2], 0.01, 'nope' as 'box')).toThrow(RangeError);
		expect(() => qLimitBox([1, -2], 0.01)).toThrow(/≥ 0/);
		expect(() => qLimitJacksonMudholkar([], 0.01)).toThrow(/no residual variance/);
	});
});
