import { describe, expect, it } from 'vitest';
import { ewma, forecastCrossing, referenceStats, runRules } from '../../../src/lib/monitoring';
import { seededNormal } from './helpers';

describe('EWMA (Roberts 1959; time-varying limits after Lucas & Saccucci 1990)', () => {
	it('recursion z_i = λx_i + (1 − λ)z_{i−1} from z_0 = μ0', () => {
		const c = ewma([1, 1, 1, 2], { mean: 1, sd: 0.1 });
		expect(Array.from(c.values)).toEqual([1, 1, 1, 1.2000000000000002]);
	});
	it('limits μ0 ± Lσ√(λ/(2−λ)(1 − (1−λ)^{2i})): 0.6 at i = 1 and 1.0 asymptotically for λ = 0.2, L = 3, σ = 1 (hand computation)', () => {
		const c = ewma(new Array(200).fill(0), { mean: 0, sd: 1 });
		expect(c.upper[0]).toBeCloseTo(0.6, 12);
		expect(c.lower[0]).toBeCloseTo(-0.6, 12);
		expect(c.upper[199]).toBeCloseTo(1, 12);
		expect(c.upperAsymptote).toBeCloseTo(1, 12);
		for (let i = 1; i < 200; i++) expect(c.upper[i]).toBeGreaterThanOrEqual(c.upper[i - 1]);
		expect(c.upper[10]).toBeGreaterThan(c.upper[9]);
	});
	it('signals a sustained 1σ shift within a few tens of wafers and not before it', () => {
		const g = seededNormal(5);
		const s = Array.from({ length: 100 }, (_, i) => 1 + 0.1 * g() + (i >= 60 ? 0.1 : 0));
		const c = ewma(s, { mean: 1, sd: 0.1 });
		expect(c.signals.length).toBeGreaterThan(0);
		expect(c.signals[0]).toBeGreaterThanOrEqual(60);
		expect(c.signals[0]).toBeLessThan(90);
	});
	it('estimates μ0 and σ from a reference segment when they are not given', () => {
		const s = [1, 2, 3, 10, 10];
		expect(referenceStats(s, 3)).toEqual({ mean: 2, sd: 1 });
		expect(ewma(s, { referenceLength: 3 }).mean).toBe(2);
		expect(() => ewma([1, 1, 1])).toThrow(/zero spread/);
		expect(() => ewma([1, NaN, 2], { mean: 0, sd: 1 })).toThrow(/not finite/);
		expect(() => ewma([1, 2], { lambda: 0, mean: 0, sd: 1 })).toThrow(RangeError);
	});
});

describe('run rules (Western Electric handbook 1956, zone tests 1–4)', () => {
	const o = { mean: 0, sd: 1 };
	it('one value beyond 3σ', () => {
		expect(runRules([0, 0, 0, 3.5], o)).toEqual([{ rule: 'beyond-3sd', index: 3, start: 3, side: 'high' }]);
	});
	it('two of three beyond 2σ on the same side', () => {
		expect(runRules([0, 2.5, 0, 2.5], o)).toEqual([{ rule: '2-of-3-beyond-2sd', index: 3, start: 1, side: 'high' }]);
		expect(runRules([0, 2.5, 0, 0, 2.5], o)).toEqual([]);
	});
	it('four of five beyond 1σ on the same side', () => {
		expect(runRules([1.5, 1.5, 0, 1.5, 1.5], o)).toEqual([{ rule: '4-of-5-beyond-1sd', index: 4, start: 0, side: 'high' }]);
	});
	it('eight in a row on the same side of the centre', () => {
		const v = runRules(new Array(9).fill(0.5), o);
		expect(v.map((x) => x.index)).toEqual([7, 8]);
		expect(v.every((x) => x.rule === '8-same-side')).toBe(true);
	});
	it('the low side only when asked', () => {
		expect(runRules([0, 0, -3.5], o)).toEqual([]);
		expect(runRules([0, 0, -3.5], { ...o, sides: ['low'] })[0]).toMatchObject({ rule: 'beyond-3sd', side: 'low' });
	});
	it('an in-control normal series fires rule 1 about 0.135 % of the time (normal tail)', () => {
		const g = seededNormal(9);
		const s = Array.from({ length: 20000 }, g);
		const n = runRules(s, { ...o, rules: ['beyond-3sd'] }).length;
		expect(n).toBeGreaterThan(10); // expected 27; Poisson 99.9 % range ≈ 12–46
		expect(n).toBeLessThan(50);
	});
});

describe('linear-trend forecast of the EWMA crossing its limit', () => {
	it('noise-free ramp: crossing where the lagged trend meets the steady-state limit', () => {
		// x_i = 0.5 + 0.001 i; λ = 0.2 ⇒ EWMA ≈ trend lagged by (1 − λ)/λ = 4 wafers; limit 0.6 ⇒
		// crossing at i ≈ 105, i.e. 46 wafers after the last index 59 (hand computation).
		const s = Array.from({ length: 60 }, (_, i) => 0.5 + 0.001 * i);
		const c = ewma(s, { mean: 0.5, sd: 0.1 });
		const f = forecastCrossing(s, c);
		expect(f.slope).toBeCloseTo(0.001, 12);
		expect(f.wafers).not.toBeNull();
		expect(Math.abs(f.wafers! - 46)).toBeLessThanOrEqual(1);
		expect(f.earliest).toBe(f.wafers);
	});
	it('noisy ramp: the range brackets the estimate and widens with the noise', () => {
		const g = seededNormal(3);
		const s = Array.from({ length: 60 }, (_, i) => 0.5 + 0.001 * i + 0.01 * g());
		const f = forecastCrossing(s, ewma(s, { mean: 0.5, sd: 0.1 }), { window: 40 });
		expect(f.earliest!).toBeLessThanOrEqual(f.wafers!);
		expect(f.latest === null || f.latest >= f.wafers!).toBe(true);
		expect(f.slopeSe).toBeGreaterThan(0);
	});
	it('no upward trend: no crossing; already above: zero', () => {
		const flat = new Array(40).fill(0.5);
		expect(forecastCrossing(flat, ewma(flat, { mean: 0.5, sd: 0.1 })).wafers).toBeNull();
		const high = new Array(40).fill(2);
		expect(forecastCrossing(high, ewma(high, { mean: 0.5, sd: 0.1 })).wafers).toBe(0);
		expect(() => forecastCrossing([1, 2], ewma([1, 2], { mean: 0, sd: 1 }))).toThrow(RangeError);
	});
});
