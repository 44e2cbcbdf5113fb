import { describe, expect, it } from 'vitest';
import {
	ewma,
	ewmaInflation,
	ewmastVarianceFactor,
	sampleAutocorrelation
} from '../../../src/lib/monitoring';
import { seededNormal } from './helpers';

/**
 * Monte Carlo: the EWMA chart (λ = 0.2, L = 3, upper limit, known in-control mean 0 and marginal
 * sd 1) on in-control data. Two figures per case: the share of wafers above the limit, and alarm
 * openings (a wafer above the limit after one that was not, which is how Lockstep opens one alarm per
 * condition) per 1,000 wafers. For a Gaussian EWMA with its exact variance the first is
 * 1 − Φ(3) = 0.135 % (standard normal table, e.g. Abramowitz & Stegun 1964, table 26.1), whatever the
 * autocorrelation; the iid chart on AR(1) data is far above it. Seeded (MT19937 normals).
 */
const LAMBDA = 0.2;
const L = 3;
const SERIES = 300;
const LENGTH = 2000;
const GOLDEN = 80; // a golden set of the demo's size, for the estimated-ACF case

function ar1(g: () => number, n: number, phi: number): Float64Array {
	const x = new Float64Array(n);
	const e = Math.sqrt(1 - phi * phi); // innovations scaled so that the marginal sd is 1
	x[0] = g();
	for (let t = 1; t < n; t++) x[t] = phi * x[t - 1] + e * g();
	return x;
}

/** share of points above the upper limit, and alarm openings per 1,000 wafers */
function falseAlarms(phi: number, sdOf: (golden: Float64Array) => number, seed: number) {
	const g = seededNormal(seed);
	let above = 0;
	let openings = 0;
	let sdSum = 0;
	for (let s = 0; s < SERIES; s++) {
		const x = ar1(g, GOLDEN + LENGTH, phi);
		const sd = sdOf(x.subarray(0, GOLDEN));
		sdSum += sd;
		const c = ewma(x.subarray(GOLDEN), { lambda: LAMBDA, L, mean: 0, sd });
		let prev = false;
		for (let i = 0; i < LENGTH; i++) {
			const out = c.values[i] > c.upper[i];
			if (out) above++;
			if (out && !prev) openings++;
			prev = out;
		}
	}
	return {
		rate: above / (SERIES * LENGTH),
		per1000: (1000 * openings) / (SERIES * LENGTH),
		meanSdRatio: sdSum / SERIES
	};
}

const pct = (v: number) => `${(100 * v).toFixed(3)} %`;
const iid = () => 1;
const trueF = (phi: number) => () =>
	Math.sqrt(
		ewmastVarianceFactor(
			LAMBDA,
			Array.from({ length: 25 }, (_, k) => phi ** (k + 1))
		)
	);
const estimatedF = (cutoff: 'first-non-positive' | 'first-insignificant') => (golden: Float64Array) =>
	Math.sqrt(ewmaInflation(LAMBDA, sampleAutocorrelation(golden, 25), golden.length, { cutoff }).factor);

type Figures = ReturnType<typeof falseAlarms>;

describe('EWMA with Zhang’s (1998) inflated variance on AR(1) data: in-control false alarms', () => {
	it('iid chart on iid data, and on AR(1) φ = 0.5 and 0.8 without and with the inflation', () => {
		const base = falseAlarms(0, iid, 1);
		const iidEstimated = falseAlarms(0, estimatedF('first-non-positive'), 1);
		const rows: [string, Figures][] = [
			['iid data, iid chart', base],
			[`iid data, σ√F from ${GOLDEN} golden`, iidEstimated]
		];
		const results: Record<
			string,
			{ plain: Figures; trueRho: Figures; estimated: Figures; bartlett: Figures }
		> = {};
		for (const phi of [0.5, 0.8]) {
			const r = {
				plain: falseAlarms(phi, iid, 2),
				trueRho: falseAlarms(phi, trueF(phi), 2),
				estimated: falseAlarms(phi, estimatedF('first-non-positive'), 2),
				bartlett: falseAlarms(phi, estimatedF('first-insignificant'), 2)
			};
			results[phi] = r;
			rows.push(
				[`AR(1) φ = ${phi}, iid chart`, r.plain],
				[`AR(1) φ = ${phi}, σ√F, ρ(k) = φ^k`, r.trueRho],
				[`AR(1) φ = ${phi}, σ√F from ${GOLDEN} golden`, r.estimated],
				[`AR(1) φ = ${phi}, same, Bartlett cutoff`, r.bartlett]
			);
		}
		console.log(
			`EWMA λ = ${LAMBDA}, L = ${L}, upper limit; ${SERIES} series × ${LENGTH} wafers each\n` +
				rows
					.map(
						([name, r]) =>
							`  ${name.padEnd(38)} above limit ${pct(r.rate).padStart(8)}   openings/1000 ${r.per1000.toFixed(3)}   mean √F ${r.meanSdRatio.toFixed(3)}`
					)
					.join('\n')
		);
		// iid chart on iid data: 1 − Φ(3) = 0.135 % (normal table); Monte Carlo band ±30 %.
		expect(base.rate).toBeGreaterThan(0.00135 * 0.7);
		expect(base.rate).toBeLessThan(0.00135 * 1.3);
		// The estimated factor on iid data only ever widens the limits (clip at 1): no more false alarms.
		expect(iidEstimated.rate).toBeLessThanOrEqual(base.rate);
		expect(iidEstimated.meanSdRatio).toBeLessThan(1.1);
		for (const phi of [0.5, 0.8]) {
			const r = results[phi];
			// Without the inflation, AR(1) data trip the chart ten times as often or more.
			expect(r.plain.rate).toBeGreaterThan(10 * base.rate);
			// With the true ρ(k): close to the iid chart on iid data (within ±40 %: correlated runs make the
			// Monte Carlo noisier at φ = 0.8).
			expect(r.trueRho.rate).toBeGreaterThan(0.6 * base.rate);
			expect(r.trueRho.rate).toBeLessThan(1.4 * base.rate);
			// With ρ estimated from 80 golden wafers (default cutoff): F is a little small on average (the
			// estimator's bias towards 0, the tail past the first r_k ≤ 0), so the rate sits somewhat above
			// the iid figure (two to three times it here), yet far below the uninflated chart and below the
			// Bartlett cutoff.
			expect(r.estimated.rate).toBeLessThan(4 * base.rate);
			expect(r.estimated.rate).toBeLessThan(r.plain.rate / 5);
			expect(r.estimated.rate).toBeLessThan(r.bartlett.rate);
		}
	});
});
