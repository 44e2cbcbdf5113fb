import { readFileSync } from 'node:fs';
import { afterAll, describe, expect, it } from 'vitest';
import {
	chiSquareUpper,
	contributions,
	fitBaseline,
	fUpper,
	normalUpper,
	qLimitBox,
	qLimitThreeMoment,
	scoreWafer,
	type PcaRoute,
	type QLimitMethod,
	type ScalingMethod
} from '../../../src/lib/monitoring';
import { FIXTURES } from './helpers';

// Independent reference: tests/reference/make_reference.py, run once with numpy 2.4 / scipy 1.17
// (LAPACK SVD, scipy.stats quantiles); its output is committed as tests/fixtures/reference-pca.json.
// Everything is compared to 1e-9 relative (a contribution is compared relative to the largest
// contribution of its vector, since a near-zero entry has no meaningful relative error).
interface RefSet {
	name: string;
	options: { k: number; scaling: ScalingMethod; alpha: number; warningAlpha: number; qMethod: QLimitMethod };
	rows: number[][];
	mean: number[];
	sd: number[];
	eigenvalues: number[];
	brokenStickK: number;
	theta: [number, number, number];
	limits: Record<'t2' | 'q' | 't2Warning' | 'qWarning' | 'phi' | 'phiWarning', number>;
	phi: { t2Weight: number; qWeight: number; g: number; h: number };
	qThreeMoment: number;
	qBox: number;
	h0: number;
	scored: Array<{
		x: number[];
		t2: number;
		q: number;
		phi: number;
		contribQ: number[];
		contribT2Complete: number[];
		rbcT2: number[];
		rbcQ: number[];
	}>;
}
const ref = JSON.parse(readFileSync(FIXTURES + 'reference-pca.json', 'utf8')) as {
	sets: RefSet[];
	quantiles: { f: number[][]; chi2: number[][]; normal: number[][] };
};
const TOL = 1e-9;
const worst = { value: 0, what: '' };
afterAll(() => console.log(`numpy/scipy agreement: worst relative difference ${worst.value.toExponential(2)} (${worst.what})`));
function note(r: number, what: string): void {
	if (r > worst.value) Object.assign(worst, { value: r, what });
}

function rel(a: number, b: number): number {
	return Math.abs(a - b) / Math.max(Math.abs(b), Number.MIN_VALUE);
}
function expectRel(a: number, b: number, what: string): void {
	note(rel(a, b), what);
	expect(rel(a, b), `${what}: ${a} vs ${b}`).toBeLessThanOrEqual(TOL);
}
function expectVector(a: Record<string, number>, names: string[], b: number[], what: string): void {
	const scale = Math.max(...b.map(Math.abs));
	names.forEach((f, j) => {
		note(Math.abs(a[f] - b[j]) / scale, what);
		expect(Math.abs(a[f] - b[j]) / scale, `${what} ${f}`).toBeLessThanOrEqual(TOL);
	});
}

describe.each(['gram', 'svd'] as PcaRoute[])('numpy/scipy reference, %s route', (route) => {
	describe.each(ref.sets.map((s) => [s.name, s] as const))('%s', (_name, set) => {
		const featureNames = set.mean.map((_, j) => `v${j}`);
		// The numpy/scipy evaluation computes the large-sample (theory) limits: their arithmetic is what is checked here.
		const model = fitBaseline(set.rows, { featureNames, route, components: set.options.k, ...set.options, limits: 'theory' });

		it('means, standard deviations and all non-zero eigenvalues', () => {
			set.mean.forEach((m, j) => expectRel(model.mean[j], m, `mean ${j}`));
			set.sd.forEach((s, j) => expectRel(model.sd[j], s, `sd ${j}`));
			expect(model.eigenvalues.length).toBe(set.eigenvalues.length);
			// Eigenvalues far below the largest carry the rounding of the route (ε·λ₁ absolute for Gram).
			set.eigenvalues.forEach((l, a) =>
				expect(Math.abs(model.eigenvalues[a] - l) / set.eigenvalues[0], `λ${a}`).toBeLessThanOrEqual(TOL)
			);
		});

		it('residual moments and T², Q, φ limits at α and at the warning α', () => {
			expectRel(model.residual.theta1, set.theta[0], 'θ1');
			expectRel(model.residual.theta2, set.theta[1], 'θ2');
			expectRel(model.residual.theta3, set.theta[2], 'θ3');
			for (const key of Object.keys(set.limits) as (keyof RefSet['limits'])[])
				expectRel(model.limits[key], set.limits[key], key);
			expectRel(model.phi.g, set.phi.g, 'g_φ');
			expectRel(model.phi.h, set.phi.h, 'h_φ');
			expectRel(model.residual.h0, set.h0, 'h0');
			const tail = model.eigenvalues.subarray(model.k);
			expectRel(qLimitThreeMoment(tail, set.options.alpha), set.qThreeMoment, 'Q three-moment');
			expectRel(qLimitBox(tail, set.options.alpha), set.qBox, 'Q Box');
		});

		it('T², Q, φ and all four contribution kinds of the test wafers', () => {
			for (const w of set.scored) {
				const s = scoreWafer(model, w.x);
				expectRel(s.t2, w.t2, 'T²');
				expectRel(s.q, w.q, 'Q');
				expectRel(s.phi, w.phi, 'φ');
				const complete = contributions(model, w.x, 'complete');
				const rbc = contributions(model, w.x, 'rbc');
				expectVector(complete.q, featureNames, w.contribQ, 'e²');
				expectVector(complete.t2!, featureNames, w.contribT2Complete, 'CD T²');
				expectVector(rbc.t2!, featureNames, w.rbcT2, 'RBC T²');
				expectVector(rbc.q, featureNames, w.rbcQ, 'RBC Q');
			}
		});

		it('broken-stick k agrees with the numpy evaluation', () => {
			expect(fitBaseline(set.rows, { featureNames, route, scaling: set.options.scaling }).k).toBe(set.brokenStickK);
		});
	});
});

describe('quantiles against scipy.stats (make_reference.py)', () => {
	it.each(ref.quantiles.f)('F upper α=%f (%i, %i) = %f', (a, d1, d2, v) => expectRel(fUpper(a, d1, d2), v, 'F'));
	it.each(ref.quantiles.chi2)('χ² upper α=%f k=%f = %f', (a, k, v) => expectRel(chiSquareUpper(a, k), v, 'χ²'));
	it.each(ref.quantiles.normal)('normal upper α=%f = %f', (a, v) => expectRel(normalUpper(a), v, 'z'));
});
