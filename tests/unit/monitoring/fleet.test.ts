import { describe, expect, it } from 'vitest';
import { compareChambers, fitBaseline, modifiedZScores, MonitoringInputError, scoreWafer } from '../../../src/lib/monitoring';
import { seededNormal } from './helpers';

// Fleet matching: 24 simulated chambers running the same recipe step. Every chamber differs a little
// (offsets of 0.2σ per line, as real fleets do); chamber C07 sits 2σ higher on three lines
// (σ = wafer-to-wafer sd within a chamber), as after a part swap, while its own model stays quiet.
// Flag rule: modified z > 3.5 (Iglewicz & Hoaglin 1993).
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

describe('fleet matching', () => {
	const result = compareChambers(chambers, { featureNames, components: 3, window: 25 });

	it('flags the chamber offset by 2σ on three lines, and no other', () => {
		const flagged = result.chambers.filter((c) => c.flagged).map((c) => c.chamberId);
		expect(flagged).toEqual(['C07']);
		const others = result.chambers.filter((c) => c.chamberId !== 'C07').map((c) => c.modifiedZ);
		console.log(
			`fleet: C07 modified z ${result.chambers[6].modifiedZ.toFixed(2)}; others max ${Math.max(...others).toFixed(2)}, min ${Math.min(...others).toFixed(2)}`
		);
	});

	it('names the shifted lines as what separates it from the fleet, about +2σ each', () => {
		const c07 = result.chambers.find((c) => c.chamberId === 'C07')!;
		const top = c07.separatingFeatures.slice(0, 3);
		expect(top.map((f) => f.feature).sort()).toEqual(SHIFTED.map((j) => featureNames[j]).sort());
		expect(top.every((f) => f.flagged && f.modifiedZ > 3.5)).toBe(true);
		// offset in fleet golden sd (which includes the chamber spread, so a little under 2)
		for (const f of top) expect(f.offsetSd).toBeGreaterThan(1.2);
	});

	it("the shifted chamber's own baseline is quiet: only the fleet view shows it", () => {
		const c07 = chambers[6];
		const own = fitBaseline(c07.golden, { featureNames, components: 3 });
		const alarms = c07.recent.filter((x) => scoreWafer(own, x).state === 'alarm').length;
		expect(alarms).toBeLessThanOrEqual(4);
	});

	it('refuses a fleet of fewer than 3 chambers, duplicates, and bad rows naming the chamber', () => {
		expect(() => compareChambers(chambers.slice(0, 2), { featureNames })).toThrow(MonitoringInputError);
		expect(() => compareChambers([chambers[0], chambers[0], chambers[1]], { featureNames })).toThrow(/twice/);
		const bad = chambers.map((c) => ({ ...c, recent: c.recent.map((r) => [...r]) }));
		bad[3].recent[39][2] = NaN;
		expect(() => compareChambers(bad, { featureNames, model: result.model })).toThrow(/C04.*oes_419.4/);
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
