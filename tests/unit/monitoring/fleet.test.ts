import { describe, expect, it } from 'vitest';
import { benjaminiHochberg, compareChambers, fitBaseline, fitFleetReference, modifiedZScores, MonitoringInputError, scoreWafer, simesCombined } from '../../../src/lib/monitoring';
import { upperNormalScore } from '../../../src/lib/monitoring/fleet';
import { simulateFleet } from '../../helpers/fleet-sim';
import { seededNormal } from './helpers';

// A realistic fleet: 24 simulated chambers running the same recipe step. Every chamber differs a
// little (offsets of 0.2σ per line, in golden and recent wafers alike, as real fleets do); chamber C07
// sits 2σ higher on three lines (σ = wafer-to-wafer sd within a chamber) in all its wafers, golden ones
// included — a mismatch since its qualification, as after a part swap — so its own model stays quiet
// and its golden mean must not widen the fleet's between-chamber yardstick (robust τ²).
const LINES = 40;
const g = seededNormal(777);
const featureNames = Array.from({ length: LINES }, (_, j) => `oes_${(400 + 9.7 * j).toFixed(1)}`);
const W = [3, 2, 1].map(() => Array.from({ length: LINES }, () => g()));
const sigma = Array.from({ length: LINES }, (_, j) => {
	let v = 0.25;
	for (const w of W) v += w[j] * w[j];
	return Math.sqrt(v);
});
const SHIFTED = [5, 17, 29];
const chambers = Array.from({ length: 24 }, (_, c) => {
	const id = `C${String(c + 1).padStart(2, '0')}`;
	const offset = Array.from({ length: LINES }, (_, j) => 0.2 * sigma[j] * g() + (id === 'C07' && SHIFTED.includes(j) ? 2 * sigma[j] : 0));
	const wafer = () => {
		const t = [g(), g(), g()];
		return Array.from({ length: LINES }, (_, j) => 1000 + 10 * j + offset[j] + W[0][j] * t[0] + W[1][j] * t[1] + W[2][j] * t[2] + 0.5 * g());
	};
	return { chamberId: id, golden: Array.from({ length: 30 }, wafer), recent: Array.from({ length: 40 }, wafer) };
});

describe('fleet matching (between/within reference, Simes + Holm over chambers, BH over features)', () => {
	const result = compareChambers(chambers, { featureNames, window: 25 });

	it('flags the chamber offset by 2σ on three lines, and no other, in a fleet with a real chamber-to-chamber spread', () => {
		const flagged = result.chambers.filter((c) => c.flagged).map((c) => c.chamberId);
		expect(flagged).toEqual(['C07']);
		const others = result.chambers.filter((c) => c.chamberId !== 'C07').map((c) => c.z);
		expect(Math.max(...others)).toBeLessThan(result.threshold);
		// the between-chamber variance at qualification is what keeps the 0.2σ spread in family
		const ref = result.reference;
		const meanTauRatio = Array.from(ref.betweenVar).reduce((s, t, j) => s + t / ref.withinVar[j], 0) / LINES;
		expect(meanTauRatio).toBeGreaterThan(0.005);
	});

	it('names exactly the shifted lines (BH at 5 %), about +2σ each', () => {
		const c07 = result.chambers.find((c) => c.chamberId === 'C07')!;
		const named = c07.separatingFeatures.filter((f) => f.flagged);
		expect(named.map((f) => f.feature).sort()).toEqual(SHIFTED.map((j) => featureNames[j]).sort());
		for (const f of named) {
			expect(f.qValue).toBeLessThanOrEqual(0.05);
			expect(f.z).toBeGreaterThan(0);
			expect(f.offsetSd).toBeGreaterThan(1.4);
			expect(f.offsetSd).toBeLessThan(2.6);
		}
		// z is the normal score of the fleet-adjusted p-value: consistent with the flag
		expect(c07.z).toBeGreaterThanOrEqual(result.threshold);
		expect(result.threshold).toBeCloseTo(2.5758293035489, 9); // Φ⁻¹(0.995), NIST/SEMATECH e-Handbook table 1.3.6.7.1
		expect(c07.adjustedP).toBeLessThanOrEqual(0.01);
		// the median statistic over its 40 lines: near 0, since only 3 moved
		expect(Math.abs(c07.medianZ)).toBeLessThan(1.5);
	});

	it('names no feature of a chamber that is not flagged', () => {
		for (const c of result.chambers.filter((x) => !x.flagged)) expect(c.separatingFeatures.some((f) => f.flagged)).toBe(false);
	});

	it("the shifted chamber's own baseline is quiet: only the fleet view shows it", () => {
		const c07 = chambers[6];
		const own = fitBaseline(c07.golden, { featureNames, components: 3 });
		const alarms = c07.recent.filter((x) => scoreWafer(own, x).state === 'alarm').length;
		expect(alarms).toBeLessThanOrEqual(4);
	});

	it('refuses a fleet of fewer than 3 chambers, duplicates, bad options and bad rows naming the chamber', () => {
		expect(() => compareChambers(chambers.slice(0, 2), { featureNames })).toThrow(MonitoringInputError);
		expect(() => compareChambers([chambers[0], chambers[0], chambers[1]], { featureNames })).toThrow(/twice/);
		expect(() => compareChambers(chambers, { featureNames, alpha: 0 })).toThrow(RangeError);
		expect(() => compareChambers(chambers, { featureNames, reference: { ...result.reference, featureNames: ['x'] } })).toThrow(/other features/);
		expect(() => fitFleetReference(chambers.map((c) => ({ ...c, golden: c.golden.slice(0, 5) })), featureNames)).toThrow(/10 golden wafers/);
		const bad = chambers.map((c) => ({ ...c, recent: c.recent.map((r) => [...r]) }));
		bad[3].recent[39][2] = NaN;
		expect(() => compareChambers(bad, { featureNames, reference: result.reference })).toThrow(/C04.*oes_419.4/);
	});
});

describe('fleet matching: false-flag rate and power by Monte Carlo (seeded; bench/fleet.ts runs 1,000 per size)', () => {
	// Identical chambers (30 golden + 25 recent wafers each, 20 correlated features): the issue asks for
	// ≤ 1 % of runs with any flag; 200 runs per size, so allow ≤ 5 flagged runs per size (P(X ≥ 6) ≈ 1.6 %
	// for a true 1 %, binomial) and ≤ 1.2 % over all 1,200 runs. One chamber offset by 2σ on three
	// features: flagged in ≥ 95 % (checked on 40 runs per size: ≥ 38).
	const sizes = [3, 5, 8, 12, 24, 40];
	const counts = sizes.map((C) => {
		let any = 0;
		let caught = 0;
		for (let r = 0; r < 200; r++) {
			const a = simulateFleet({ chambers: C, features: 20, golden: 30, recent: 25 }, 77_001 * C + r);
			if (compareChambers(a.chambers, { featureNames: a.featureNames }).chambers.some((c) => c.flagged)) any++;
			if (r < 40) {
				const b = simulateFleet({ chambers: C, features: 20, golden: 30, recent: 25, offsetChamber: 0 }, 99_001 * C + r);
				if (compareChambers(b.chambers, { featureNames: b.featureNames }).chambers[0].flagged) caught++;
			}
		}
		return { C, any, caught };
	});
	it.each(sizes.map((C, i) => [C, i]))('fleet of %i: identical chambers rarely flagged, the offset one nearly always', (_C, i) => {
		expect(counts[i].any).toBeLessThanOrEqual(5);
		expect(counts[i].caught).toBeGreaterThanOrEqual(38);
	});
	it('over all sizes, at most 1.2 % of runs flag an identical chamber', () => {
		expect(counts.reduce((s, c) => s + c.any, 0)).toBeLessThanOrEqual(14);
	});
});

describe('upperNormalScore: z of a tiny upper-tail probability stays finite', () => {
	it('agrees with scipy.stats.norm.isf (scipy 1.17.1) to 1e-9 at 0.005, 1e-7 at 1e-10, 5e-3 below 1e-15', () => {
		expect(upperNormalScore(0.005)).toBeCloseTo(2.575829303548901, 9);
		expect(upperNormalScore(1e-10)).toBeCloseTo(6.361340902404056, 7); // @stdlib's quantile: 1e-8 here
		expect(upperNormalScore(1e-20)).toBeCloseTo(9.262340089798409, 2);
		expect(upperNormalScore(1e-100)).toBeCloseTo(21.273453560965322, 2);
		expect(upperNormalScore(1e-300)).toBeCloseTo(37.0470962993612, 2);
		expect(upperNormalScore(0)).toBeGreaterThan(36);
		expect(Number.isFinite(upperNormalScore(0))).toBe(true);
		expect(upperNormalScore(0.7)).toBe(0);
	});
});

describe('Benjamini–Hochberg and Simes (false-discovery control)', () => {
	const p = [0.01, 0.04, 0.03, 0.2, 0.001, 0.5, 0.049, 0.0125];
	it('adjusted p-values agree with scipy.stats.false_discovery_control(method="bh") (scipy 1.17.1, to 1e-12)', () => {
		const want = [0.03333333333333333, 0.064, 0.06, 0.22857142857142856, 0.008, 0.5, 0.06533333333333333, 0.03333333333333333];
		const r = benjaminiHochberg(p, 0.05);
		want.forEach((w, i) => expect(r.adjusted[i]).toBeCloseTo(w, 12));
		expect(r.rejected).toEqual([true, false, false, false, true, false, false, true]);
		expect(r.count).toBe(3);
	});
	it('worked example of the step-up rule (Benjamini & Hochberg 1995, §3): p_(i) ≤ i q / m', () => {
		// sorted 0.01, 0.03, 0.04, 0.2 against 0.0125, 0.025, 0.0375, 0.05: only the first passes
		expect(benjaminiHochberg([0.01, 0.04, 0.03, 0.2], 0.05).rejected).toEqual([true, false, false, false]);
	});
	it('Simes = the smallest BH-adjusted p-value (Simes 1986)', () => {
		expect(simesCombined(p)).toBeCloseTo(0.008, 15);
		expect(simesCombined([0.01, 0.04, 0.03, 0.2])).toBeCloseTo(0.04, 15);
	});
	it('refuses p-values outside [0, 1], an empty list and a bad q', () => {
		expect(() => benjaminiHochberg([0.1, 1.2], 0.05)).toThrow(/p-value 2/);
		expect(() => simesCombined([])).toThrow(MonitoringInputError);
		expect(() => benjaminiHochberg([0.1], 1)).toThrow(RangeError);
	});
});

describe('modified z-scores (Iglewicz & Hoaglin 1993, §3)', () => {
	it('worked example: M = 0.6745 (x − median) / MAD', () => {
		// values 1, 2, 3, 4, 100: median 3, |x − 3| = 2, 1, 0, 1, 97, MAD = 1 (hand computation)
		const m = modifiedZScores([1, 2, 3, 4, 100]);
		expect(m.median).toBe(3);
		expect(m.mad).toBe(1);
		expect(m.scores[4]).toBeCloseTo(0.6745 * 97, 12);
		expect(m.scores[0]).toBeCloseTo(-1.349, 12);
	});
	it('falls back to the mean absolute deviation when the MAD is 0', () => {
		const m = modifiedZScores([5, 5, 5, 5, 9]);
		expect(m.spread).toBe('meanad');
		expect(m.scores[4]).toBeCloseTo(4 / (1.253314 * 0.8), 12);
		expect(Array.from(modifiedZScores([2, 2, 2]).scores)).toEqual([0, 0, 0]);
	});
	it('needs at least 3 finite values', () => {
		expect(() => modifiedZScores([1, 2])).toThrow(RangeError);
		expect(() => modifiedZScores([1, 2, NaN])).toThrow(RangeError);
	});
});
