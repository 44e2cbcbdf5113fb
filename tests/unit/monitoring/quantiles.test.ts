import { describe, expect, it } from 'vitest';
import { chiSquareUpper, fUpper, normalUpper, tTwoSided } from '../../../src/lib/monitoring';

// Printed table values: NIST/SEMATECH e-Handbook of Statistical Methods, §1.3.6.7 (tables 1.3.6.7.1
// normal, 1.3.6.7.2 t, 1.3.6.7.3 F, 1.3.6.7.4 χ²), three decimals. Transcribed FROM MEMORY (no network
// on this machine); each also agrees with scipy.stats to the table's rounding (see reference.test.ts,
// where the engine matches scipy to 1e-9). Tolerance: half a unit of the last printed decimal.
const HALF_ULP = 0.0005 + 1e-9;

describe('F upper critical values, NIST e-Handbook table 1.3.6.7.3 (from memory)', () => {
	it.each([
		[0.05, 1, 1, 161.448],
		[0.05, 2, 10, 4.103],
		[0.05, 5, 10, 3.326],
		[0.05, 10, 10, 2.978],
		[0.05, 3, 20, 3.098],
		[0.01, 1, 1, 4052.181],
		[0.01, 2, 10, 7.559],
		[0.01, 5, 10, 5.636]
	])('F_%f(%i, %i) = %f', (a, d1, d2, v) => {
		expect(Math.abs(fUpper(a, d1, d2) - v)).toBeLessThanOrEqual(HALF_ULP);
	});
});

describe('χ² upper critical values, NIST e-Handbook table 1.3.6.7.4 (from memory)', () => {
	it.each([
		[0.05, 1, 3.841],
		[0.01, 1, 6.635],
		[0.05, 5, 11.07],
		[0.05, 10, 18.307],
		[0.01, 10, 23.209],
		[0.05, 30, 43.773]
	])('χ²_%f(%i) = %f', (a, k, v) => {
		expect(Math.abs(chiSquareUpper(a, k) - v)).toBeLessThanOrEqual(HALF_ULP);
	});
});

describe('normal and t critical values, NIST e-Handbook table 1.3.6.7.2, rows ν = ∞ and ν = 10 (from memory)', () => {
	it.each([
		[0.1, 1.282],
		[0.05, 1.645],
		[0.025, 1.96],
		[0.01, 2.326],
		[0.005, 2.576],
		[0.001, 3.09]
	])('z_%f = %f', (a, v) => {
		expect(Math.abs(normalUpper(a) - v)).toBeLessThanOrEqual(HALF_ULP);
	});
	it('t two-sided 5 % with 10 degrees of freedom = 2.228', () => {
		expect(Math.abs(tTwoSided(0.05, 10) - 2.228)).toBeLessThanOrEqual(HALF_ULP);
	});
});

describe('quantile arguments that must throw', () => {
	it.each([0, 1, -0.1, NaN])('α = %f', (a) => {
		expect(() => fUpper(a, 2, 3)).toThrow(RangeError);
		expect(() => chiSquareUpper(a, 2)).toThrow(RangeError);
		expect(() => normalUpper(a)).toThrow(RangeError);
	});
	it('non-positive degrees of freedom', () => {
		expect(() => fUpper(0.05, 0, 3)).toThrow(RangeError);
		expect(() => chiSquareUpper(0.05, -1)).toThrow(RangeError);
	});
});
