import { describe, expect, it } from 'vitest';
import { XSadd as XSAdd } from 'ml-xsadd';
import {
	DRIFT_SCORE_CAP,
	driftChart,
	driftChartSd,
	ewmaLimitForArl,
	ewmaUpperArl,
	normalTail,
	ratioMoments,
	ratioShape,
	scoreScale,
	shiftedChiSquare
} from '../../../src/lib/monitoring/drift.ts';

const gauss = (rng: XSAdd) => {
	// Box–Muller on the seeded uniform generator
	const u = Math.max(rng.random(), 1e-12);
	return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * rng.random());
};
const chiSquare = (rng: XSAdd, h: number) => {
	let s = 0;
	for (let j = 0; j < h; j++) s += gauss(rng) ** 2;
	return s;
};

describe('normal tail and the EWMA run length', () => {
	it('matches scipy for P(Z > 3) and gives the Shewhart ARL at λ = 1', () => {
		// scipy.stats.norm.sf(3) = 0.0013498980316300933; 1/sf(3) = 740.7966946899184 (evaluated with scipy 1.x)
		expect(normalTail(3)).toBeCloseTo(0.0013498980316300933, 12);
		// λ = 1: the EWMA is the observation itself, the chain is exact up to its discretisation
		expect(ewmaUpperArl(1, 3)).toBeCloseTo(740.7966946899184, 4);
	});

	it('converges as the chain gets finer (Brook & Evans 1972: the discretisation error shrinks with the cell width)', () => {
		const coarse = ewmaUpperArl(0.2, 3.5, 81);
		const fine = ewmaUpperArl(0.2, 3.5, 321);
		expect(Math.abs(ewmaUpperArl(0.2, 3.5, 161) - fine) / fine).toBeLessThan(0.01);
		expect(Math.abs(coarse - fine)).toBeGreaterThan(Math.abs(ewmaUpperArl(0.2, 3.5, 161) - fine));
	});

	it('finds the L whose chain ARL is the target, and a simulation agrees within 10 % (seeded, 300 run lengths)', () => {
		const L = ewmaLimitForArl(0.2, 300, Infinity);
		expect(ewmaUpperArl(0.2, L, 161, Infinity)).toBeCloseTo(300, -1);
		const rng = new XSAdd(7);
		const s = Math.sqrt(0.2 / 1.8);
		let total = 0;
		for (let r = 0; r < 300; r++) {
			let z = 0;
			let t = 0;
			// steady-state limit, as the chain assumes
			while (z <= L * s) {
				z = 0.8 * z + 0.2 * gauss(rng);
				t++;
			}
			total += t;
		}
		expect(Math.abs(total / 300 - 300) / 300).toBeLessThan(0.1);
	});

	it('refuses a bad λ, L or target', () => {
		expect(() => ewmaUpperArl(0, 3)).toThrow(RangeError);
		expect(() => ewmaUpperArl(0.2, -1)).toThrow(RangeError);
		expect(() => ewmaLimitForArl(0.2, 5)).toThrow(RangeError);
	});
});

describe('the ratio law and its normal scores', () => {
	it('recovers a shifted χ² from its exact moments (a + g·χ²_h: mean a + gh, var 2g²h, skew √(8/h))', () => {
		const f = shiftedChiSquare({ mean: 2 + 0.5 * 4, sd: 0.5 * Math.sqrt(8), skew: Math.sqrt(8 / 4), n: 1000 });
		expect(f.h).toBeCloseTo(4, 12);
		expect(f.g).toBeCloseTo(0.5, 12);
		expect(f.a).toBeCloseTo(2, 12);
		// With few values the skewness is not trusted: the two-moment fit (a = 0, h = 2·mean²/sd²).
		const two = shiftedChiSquare({ mean: 4, sd: Math.sqrt(8), skew: 5, n: 100 });
		expect(two.a).toBe(0);
		expect(two.h).toBeCloseTo(ratioShape(4, Math.sqrt(8)), 12);
	});

	it('gives the χ² quantile through the Wilson–Hilferty inverse (scipy chi2.ppf(0.99, 3) = 11.3449, WH ≈ 0.2 % off)', () => {
		const scale = scoreScale({ a: 0, g: 1, h: 3 });
		// norm.isf(0.01) = 2.3263478740408408 (scipy)
		expect(Math.abs(scale.ratio(2.3263478740408408) / 11.344866730144373 - 1)).toBeLessThan(0.005);
		expect(scale.score(scale.ratio(1.7))).toBeCloseTo(1.7, 10);
	});

	it('makes skewed χ²-like ratios normal: tail shares within 15 % of the normal ones (seeded, 200,000 draws)', () => {
		const rng = new XSAdd(11);
		const xs = Float64Array.from({ length: 200_000 }, () => 0.4 + 0.1 * chiSquare(rng, 3));
		const scale = scoreScale(shiftedChiSquare(ratioMoments(xs.subarray(0, 5000))));
		for (const z of [2, 3]) {
			let n = 0;
			for (const x of xs) if (scale.score(x) > z) n++;
			expect(Math.abs(n / xs.length / normalTail(z) - 1)).toBeLessThan(0.15);
		}
	});

	it('computes moments, skipping NaN, and refuses a constant series', () => {
		const m = ratioMoments([1, NaN, 2, 3, 10]);
		expect(m.n).toBe(4);
		expect(m.mean).toBe(4);
		expect(() => ratioMoments([2, 2, 2])).toThrow(RangeError);
		expect(() => shiftedChiSquare({ mean: 0, sd: 1, skew: 1, n: 500 })).toThrow(RangeError);
	});
});

describe('the drift chart', () => {
	it('caps a score at centre + 3σ before smoothing, so one far wafer moves it by at most 0.6 at λ = 0.2', () => {
		const c = driftChart([0, 0, 50], { lambda: 0.2, L: 4, sd: 1 });
		expect(c.values[2]).toBeCloseTo(0.2 * DRIFT_SCORE_CAP, 12);
		expect(c.signals).toEqual([]);
	});

	it('widens its σ by Zhang’s factor from the kept ACF (F = 1 + 2·0.5·0.8·(1 − 0.8^48) at λ = 0.2)', () => {
		const { sd, inflation } = driftChartSd({ mean: 1, sd: 1, acf: [0.5, -0.1] }, 200, 0.2);
		expect(sd ** 2).toBeCloseTo(1 + 2 * 0.5 * 0.8 * (1 - 0.8 ** 48), 12);
		expect(inflation?.lagsUsed).toBe(1);
		expect(driftChartSd({ mean: 1, sd: 1 }, 200, 0.2)).toEqual({ sd: 1, inflation: null });
	});
});
