import { describe, expect, it } from 'vitest';
import { ewmaInflation, ewmastVarianceFactor, EWMAST_M } from '../../../src/lib/monitoring';

/** AR(1), M → ∞: F = (1 + φ(1 − λ)) / (1 − φ(1 − λ)) — derived in ewma-autocorrelation.ts from Zhang (1998). */
const ar1Limit = (lambda: number, phi: number) => (1 + phi * (1 - lambda)) / (1 - phi * (1 - lambda));

describe("Zhang's (1998) EWMAST variance factor F = 1 + 2 Σ ρ(k)(1 − λ)^k (1 − (1 − λ)^{2(M−k)})", () => {
	it('independent data (ρ = 0) and λ = 1 (no smoothing) give F = 1 (the classic EWMA variance, Roberts 1959)', () => {
		expect(ewmastVarianceFactor(0.2, [])).toBe(1);
		expect(ewmastVarianceFactor(0.2, new Array(25).fill(0))).toBe(1);
		expect(ewmastVarianceFactor(1, [0.9, 0.8, 0.7])).toBe(1);
	});
	for (const lambda of [0.05, 0.2, 0.5])
		for (const phi of [-0.5, 0.3, 0.5, 0.8, 0.95])
			it(`AR(1) φ = ${phi}, λ = ${lambda}: ρ(k) = φ^k with M = 5000 meets the closed form (1 + φ(1−λ))/(1 − φ(1−λ)) to 1e-9`, () => {
				const M = 5000;
				const rho = Array.from({ length: M }, (_, i) => phi ** (i + 1));
				expect(Math.abs(ewmastVarianceFactor(lambda, rho, M) - ar1Limit(lambda, phi))).toBeLessThan(1e-9);
			});
	it('at finite M it is the exact variance of Z_M = λ Σ (1 − λ)^i x_{M−i} (brute-force double sum, ρ = MA(2)-like) plus (1 − λ)^{2M}', () => {
		// Var(Z_t)/σ² = λ² Σ_i Σ_j (1 − λ)^{i+j} ρ(|i − j|), i, j = 0…t − 1: the definition, summed term by term.
		const lambda = 0.2;
		const rho = [0.6, 0.25, 0.1, -0.05];
		const M = 25;
		const r = (h: number) => (h === 0 ? 1 : (rho[h - 1] ?? 0));
		let v = 0;
		for (let i = 0; i < M; i++)
			for (let j = 0; j < M; j++) v += lambda ** 2 * (1 - lambda) ** (i + j) * r(Math.abs(i - j));
		const exact = v / (lambda / (2 - lambda));
		expect(Math.abs(ewmastVarianceFactor(lambda, rho, M) - (exact + (1 - lambda) ** (2 * M)))).toBeLessThan(
			1e-12
		);
	});
	it('lags past M do not count, and M defaults to 25 (Zhang 1998: M ≥ 25)', () => {
		expect(EWMAST_M).toBe(25);
		const rho = Array.from({ length: 40 }, () => 0.5);
		expect(ewmastVarianceFactor(0.2, rho)).toBe(ewmastVarianceFactor(0.2, rho.slice(0, 25), 25));
		expect(ewmastVarianceFactor(0.2, rho, 10)).toBeLessThan(ewmastVarianceFactor(0.2, rho, 25));
	});
	it('refuses a bad λ, M or ρ', () => {
		expect(() => ewmastVarianceFactor(0, [0.5])).toThrow(/λ/);
		expect(() => ewmastVarianceFactor(1.2, [0.5])).toThrow(/λ/);
		expect(() => ewmastVarianceFactor(0.2, [0.5], 0)).toThrow(/M/);
		expect(() => ewmastVarianceFactor(0.2, [NaN])).toThrow(/not finite/);
	});
});

describe('ewmaInflation: the guards around an estimated ACF', () => {
	it('default: sums the lags while r_k > 0 (after Geyer 1992, initial positive sequence), then Zhang’s F', () => {
		const f = ewmaInflation(0.2, [0.5, 0.3, -0.1, 0.4], 100);
		expect(f.lagsUsed).toBe(2);
		expect(f.reason).toBe('autocorrelated');
		expect(f.factor).toBeCloseTo(ewmastVarianceFactor(0.2, [0.5, 0.3]), 12);
		expect(f.factor).toBeCloseTo(1 + 2 * (0.5 * 0.8 * (1 - 0.8 ** 48) + 0.3 * 0.64 * (1 - 0.8 ** 46)), 12);
		expect(ewmaInflation(0.2, [0.5, 0.3, 0.2], 1000).lagsUsed).toBe(3);
		expect(ewmaInflation(0.2, new Array(40).fill(0.2), 1000).lagsUsed).toBe(25); // never past M
	});
	it('Bartlett cutoff: the lags up to the first one inside 1.96 se (Bartlett 1946)', () => {
		// n = 100: se(r_1) = 0.1, se(r_2) = √(1.5)/10 ≈ 0.122: r_2 = 0.1 < 0.24 stops the sum, so r_3 = 0.4
		// (noise, or a pattern one short golden set cannot confirm) is not used.
		const f = ewmaInflation(0.2, [0.5, 0.1, 0.4], 100, { cutoff: 'first-insignificant' });
		expect(f.lagsUsed).toBe(1);
		expect(f.factor).toBeCloseTo(1 + 2 * 0.5 * 0.8 * (1 - 0.8 ** 48), 12);
		expect(ewmaInflation(0.2, [0.15, 0.1], 80, { cutoff: 'first-insignificant' })).toMatchObject({
			factor: 1,
			lagsUsed: 0,
			reason: 'no-lag-used'
		}); // 1.96/√80 ≈ 0.219
	});
	it('a first lag ≤ 0 gives F = 1 (the independent-wafer chart)', () => {
		expect(ewmaInflation(0.2, [-0.3, 0.5], 80)).toMatchObject({
			factor: 1,
			lagsUsed: 0,
			reason: 'no-lag-used'
		});
		expect(ewmaInflation(0.2, [0, 0.5], 80)).toMatchObject({ factor: 1, lagsUsed: 0 });
	});
	it('a significantly negative ACF is clipped to F = 1: never tighter than the independent-wafer chart (common practice)', () => {
		const f = ewmaInflation(0.2, [-0.6, 0.36, -0.2], 100, { cutoff: 'first-insignificant' });
		expect(f.unclipped).toBeLessThan(1);
		expect(f).toMatchObject({ factor: 1, reason: 'negative' });
	});
	it('a series shorter than minLength (default 20) gives F = 1', () => {
		expect(ewmaInflation(0.2, [0.9, 0.8], 15)).toMatchObject({ factor: 1, reason: 'short-series' });
		expect(ewmaInflation(0.2, [0.9, 0.8], 15, { minLength: 10 }).factor).toBeGreaterThan(1);
	});
	it('refuses a bad z', () => {
		expect(() => ewmaInflation(0.2, [0.5], 100, { z: 0 })).toThrow(/z/);
	});
});
