/**
 * The engine's PCA against an independent implementation from the registry: ml-pca 4.1.1
 * (mljs, SVD of the centred and scaled matrix). Eigenvalues must agree to 1e-9 relative and loadings
 * up to sign, on the metal-etch data (n > p) and on a wide n < p case.
 */
import { PCA } from 'ml-pca';
import { describe, expect, it } from 'vitest';
import { fitBaseline } from '../../../src/lib/monitoring/index.ts';
import { latentRows } from '../../helpers/fab.ts';

function compare(rows: number[][], k: number) {
	const names = rows[0].map((_, j) => `f${j}`);
	const model = fitBaseline(rows, { featureNames: names, components: k, scaling: 'autoscale' });
	const ref = new PCA(rows, { center: true, scale: true });
	const refEig = ref.getEigenvalues();
	for (let a = 0; a < model.eigenvalues.length; a++) {
		expect(Math.abs(model.eigenvalues[a] - refEig[a]) / refEig[0]).toBeLessThan(1e-9);
	}
	// ml-pca's loadings: one row per component (components × features).
	const L = ref.getLoadings().to2DArray();
	const p = names.length;
	for (let a = 0; a < k; a++) {
		let dot = 0;
		for (let j = 0; j < p; j++) dot += model.loadings[j * k + a] * L[a][j];
		const sign = Math.sign(dot);
		for (let j = 0; j < p; j++) expect(model.loadings[j * k + a]).toBeCloseTo(sign * L[a][j], 8);
	}
}

describe('PCA agrees with ml-pca (independent SVD implementation)', () => {
	it('on a tall data set (n = 120 > p = 12)', () => {
		compare(latentRows(120, 12, 31).map((r) => Array.from(r)), 3);
	});
	it('on a wide data set (n = 30 < p = 80), as golden sets of OES channels are', () => {
		compare(latentRows(30, 80, 32).map((r) => Array.from(r)), 3);
	});
});
