/**
 * In-control run lengths of the drift rule on skewed (χ²-like) ratios, through the product's own
 * pieces: the three-moment law fitted to a reference stretch (drift.ts shiftedChiSquare), the normal
 * scores (scoreScale), the EWMA with capped scores and Zhang's widening from the reference's ACF
 * (driftChart, driftChartSd), and L from the budget (alarm-rules.ts designRules).
 *
 * Ratios: r = χ²_h built from h normal components; with `lotSd` > 0 the components carry an offset
 * shared by the 25 wafers of a lot (lot-to-lot autocorrelation), rescaled so each component stays
 * N(0, 1) marginally. Used by tests/unit/monitoring/alarm-rules-arl.test.ts and bench/drift-arl.ts.
 */
import { XSadd as XSAdd } from 'ml-xsadd';
import { designRules } from '../../src/lib/monitoring/alarm-rules.ts';
import { driftChart, driftChartSd, ratioMoments, scoreScale, shiftedChiSquare } from '../../src/lib/monitoring/drift.ts';
import { sampleAutocorrelation } from '../../src/lib/monitoring/index.ts';

export interface DriftArlCase {
	h: number;
	lotSd: number;
	/** design in-control ARL of one chart (wafers) */
	arl: number;
	runs: number;
	reference: number;
	seed: number;
}

export function driftRunLengths(c: DriftArlCase): { mean: number; se: number; L: number; factor: number; lengths: number[] } {
	const rng = new XSAdd(c.seed);
	const gauss = () => {
		// Box–Muller on the seeded uniform generator
		const u = Math.max(rng.random(), 1e-12);
		return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * rng.random());
	};
	let offsets = new Array<number>(c.h).fill(0);
	let inLot = 0;
	const norm = Math.sqrt(1 + c.lotSd * c.lotSd);
	const next = () => {
		if (inLot === 0) offsets = offsets.map(() => c.lotSd * gauss());
		inLot = (inLot + 1) % 25;
		let s = 0;
		for (let j = 0; j < c.h; j++) s += ((offsets[j] + gauss()) / norm) ** 2;
		return 0.05 * s; // a ratio: the statistic over some limit
	};
	// The budget that gives one chart this ARL: the drift share is B/2 over 2 statistics.
	const policy = { falseAlarmsPer10k: (4 / c.arl) * 10_000, singleEnabled: true, runEnabled: true, runK: 3, runM: 5, ewmaEnabled: true, ewmaLambda: 0.2 };
	const { driftL: L, driftArl } = designRules(policy, 1);
	if (Math.abs(driftArl - c.arl) > 1e-6 * c.arl) throw new Error('budget arithmetic');
	const ref = Float64Array.from({ length: c.reference }, next);
	const law = scoreScale(shiftedChiSquare(ratioMoments(ref)));
	const { sd, inflation } = driftChartSd({ mean: 0, sd: 1, acf: Array.from(sampleAutocorrelation(ref, 25)) }, c.reference, 0.2);
	const lengths: number[] = [];
	const block = Math.max(200, Math.ceil(c.arl * 2));
	for (let r = 0; r < c.runs; r++) {
		// A run starts on a fresh chart (z_0 = centre, time-varying limits) and ends at its first signal.
		let t = 0; // values of this run before the current block's fresh part
		let carry: number[] = [];
		for (;;) {
			const scores = [...carry, ...Array.from({ length: block }, () => law.score(next()))];
			const chart = driftChart(scores, { lambda: 0.2, L, sd });
			// Continuing blocks restart the chart on the last 50 scores (its memory, 0.8^50 ≈ 1e-5); signals
			// inside that warm-up were already judged in the block before.
			const hit = chart.signals.find((i) => i >= carry.length && chart.values[i] > chart.upper[i]);
			if (hit !== undefined) {
				lengths.push(t + hit - carry.length + 1);
				break;
			}
			t += block;
			carry = scores.slice(-50);
			if (t > 50 * c.arl) {
				lengths.push(t); // censored: far beyond the design
				break;
			}
		}
	}
	const mean = lengths.reduce((a, b) => a + b, 0) / lengths.length;
	const sdL = Math.sqrt(lengths.reduce((a, b) => a + (b - mean) ** 2, 0) / (lengths.length - 1));
	return { mean, se: sdL / Math.sqrt(lengths.length), L, factor: inflation?.factor ?? 1, lengths };
}
