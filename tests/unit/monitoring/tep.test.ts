import { describe, expect, it } from 'vitest';
import { fitBaseline, scoreBatch } from '../../../src/lib/monitoring';
import { readDat, transpose } from './helpers';

// Tennessee Eastman process: Downs & Vogel (1993) Comput. Chem. Eng. 17:245; data files as
// distributed with Chiang, Russell & Braatz (2001) "Fault Detection and Diagnosis in Industrial
// Systems" (copied to tests/fixtures/tep, see SOURCE.md). Reference figures: shared/datasets/README.md,
// computed there with numpy/scipy (autoscale on d00, k = 11, α = 0.01, F-based T², Jackson–Mudholkar Q).
const train = transpose(readDat('tep/d00.dat')); // stored 52 × 500
const featureNames = Array.from({ length: 52 }, (_, j) => (j < 41 ? `xmeas_${j + 1}` : `xmv_${j - 40}`));

describe('Tennessee Eastman benchmark', () => {
	// The published TEP figures are those of the large-sample (theory) limits.
	const model = fitBaseline(train, { featureNames, components: 11, alpha: 0.01, limits: 'theory' });

	it('training set is 500 × 52', () => {
		expect(train.length).toBe(500);
		expect(train[0].length).toBe(52);
	});

	it('eigenvalues of the d00 correlation matrix (numpy, datasets README)', () => {
		const ref = [6.6074, 3.9332, 2.8094, 2.3313];
		ref.forEach((v, a) => expect(model.eigenvalues[a]).toBeCloseTo(v, 4));
	});

	it('reproduces the T² and Q limits to 1e-6 relative (datasets README: 25.6902, 41.6876)', () => {
		expect(Math.abs(model.limits.t2 / 25.6902 - 1)).toBeLessThan(1e-6);
		expect(Math.abs(model.limits.q / 41.6876 - 1)).toBeLessThan(1e-6);
	});

	// Missed-detection rate over samples 161–960 (the fault enters after sample 160), T² / Q.
	const known: Array<[string, number, number]> = [
		['d01_te.dat', 0.0075, 0.0025],
		['d02_te.dat', 0.02, 0.0113],
		['d04_te.dat', 0.9125, 0.0038],
		['d06_te.dat', 0.0075, 0.0],
		['d07_te.dat', 0.04, 0.0],
		['d11_te.dat', 0.7175, 0.23]
	];
	it.each(known)('%s missed-detection rates T² %f, Q %f (to 1e-3)', (file, t2Ref, qRef) => {
		const test = readDat(`tep/${file}`);
		expect(test.length).toBe(960);
		const s = scoreBatch(model, test.slice(160));
		let t2Miss = 0;
		let qMiss = 0;
		for (let i = 0; i < s.t2.length; i++) {
			if (!(s.t2[i] > model.limits.t2)) t2Miss++;
			if (!(s.q[i] > model.limits.q)) qMiss++;
		}
		expect(Math.abs(t2Miss / 800 - t2Ref)).toBeLessThanOrEqual(1e-3);
		expect(Math.abs(qMiss / 800 - qRef)).toBeLessThanOrEqual(1e-3);
	});

	it('false-alarm rates on normal test data d00_te (datasets README: T² 0.0167, Q 0.0708)', () => {
		const s = scoreBatch(model, readDat('tep/d00_te.dat'));
		const fa = (v: Float64Array, lim: number) => v.filter((x) => x > lim).length / v.length;
		expect(Math.abs(fa(s.t2, model.limits.t2) - 0.0167)).toBeLessThanOrEqual(1e-3);
		expect(Math.abs(fa(s.q, model.limits.q) - 0.0708)).toBeLessThanOrEqual(1e-3);
	});

	it('both PCA routes give the same limits', () => {
		const svd = fitBaseline(train, { featureNames, components: 11, route: 'svd', limits: 'theory' });
		expect(svd.limits.t2).toBe(model.limits.t2);
		expect(Math.abs(svd.limits.q / model.limits.q - 1)).toBeLessThan(1e-10);
	});
});
