import { describe, expect, it } from 'vitest';
import { crossValidatedScores, fitBaseline, scoreWafer } from '../../../src/lib/monitoring/index.ts';
import { latentRows } from '../../helpers/fab.ts';

describe('crossValidatedScores', () => {
	// n < p like a fab golden set: 3 latent factors on 40 features, 25 rows.
	const rows = latentRows(25, 40, 7);
	const names = Array.from({ length: 40 }, (_, j) => `f${j}`);
	const model = fitBaseline(rows, { featureNames: names, components: 3 });

	it('equals refitting without the left-out row (leave-one-out when folds = n)', () => {
		const cv = crossValidatedScores(rows, model, rows.length);
		// Independent check of row 4: fit without it and score it (definition, Wold 1978).
		const without = rows.filter((_, i) => i !== 4);
		const m = fitBaseline(without, { featureNames: names, components: 3 });
		const s = scoreWafer(m, rows[4]);
		expect(cv.qRatio[4]).toBeCloseTo(s.q / model.limits.q, 10);
		expect(cv.t2Ratio[4]).toBeCloseTo(s.t2 / model.limits.t2, 10);
	});

	it('shows the in-sample bias: out-of-sample Q of golden rows exceeds their in-sample Q on average', () => {
		const cv = crossValidatedScores(rows, model, 5);
		const inSample = rows.map((r) => scoreWafer(model, r).q / model.limits.q);
		const mean = (a: ArrayLike<number>) => Array.from(a).reduce((s, x) => s + x, 0) / a.length;
		expect(mean(cv.qRatio)).toBeGreaterThan(mean(inSample));
		expect(cv.qRatio.every((v) => Number.isFinite(v) && v >= 0)).toBe(true);
	});

	it('refuses folds outside [2, n] and folds too small to fit k components', () => {
		expect(() => crossValidatedScores(rows, model, 1)).toThrow(RangeError);
		expect(() => crossValidatedScores(rows, model, 26)).toThrow(RangeError);
		const tiny = latentRows(6, 40, 8);
		const m = fitBaseline(tiny, { featureNames: names, components: 3 });
		expect(() => crossValidatedScores(tiny, m, 2)).toThrow(/at least 5 rows/);
	});
});
