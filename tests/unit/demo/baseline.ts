/**
 * A small, independent PCA monitor used only to check that the demo data behave as a fab engineer
 * expects (the product's engine lives in src/lib/monitoring and is tested on its own).
 *
 * Autoscaling with the golden wafers' mean and standard deviation; k = fewest components explaining
 * ≥ 90 % of the scaled variance (at most 12);
 * T² limit for a new observation: k(n−1)(n+1) / (n(n−k)) · F(1−α; k, n−k) (Tracy, Young & Mason 1992,
 * eq. 4); Q limit: Jackson & Mudholkar (1979), eq. 3.6, from the residual eigenvalues θ₁, θ₂, θ₃
 * (Box 1954 when h₀ ≤ 0).
 */
import chisqQuantile from '@stdlib/stats-base-dists-chisquare-quantile';
import fQuantile from '@stdlib/stats-base-dists-f-quantile';
import normalQuantile from '@stdlib/stats-base-dists-normal-quantile';
import { Matrix, SVD } from 'ml-matrix';

export interface Baseline {
	k: number;
	eig: number[];
	n: number;
	t2Limit: number;
	qLimit: number;
	score(values: Float64Array): { t2: number; q: number; residual: Float64Array };
}

export function fitBaseline(rows: Float64Array[], alpha = 0.01): Baseline {
	const n = rows.length;
	const p = rows[0].length;
	const mean = new Float64Array(p);
	const sd = new Float64Array(p);
	for (const r of rows) for (let j = 0; j < p; j++) mean[j] += r[j] / n;
	for (const r of rows) for (let j = 0; j < p; j++) sd[j] += (r[j] - mean[j]) ** 2 / (n - 1);
	for (let j = 0; j < p; j++) sd[j] = Math.sqrt(sd[j]) || 1;
	const X = new Matrix(rows.map((r) => Array.from(r, (v, j) => (v - mean[j]) / sd[j])));
	const svd = new SVD(X, { autoTranspose: true });
	const eig = svd.diagonal.map((s) => (s * s) / (n - 1));
	const total = eig.reduce((a, b) => a + b, 0);
	let k = 0;
	for (let acc = 0; k < Math.min(12, eig.length - 1) && acc < 0.9 * total; k++) acc += eig[k];
	const V = svd.rightSingularVectors; // p × r
	const lam = eig.slice(0, k);
	const rest = eig.slice(k);
	const th = [1, 2, 3].map((e) => rest.reduce((a, l) => a + l ** e, 0));
	const h0 = 1 - (2 * th[0] * th[2]) / (3 * th[1] ** 2);
	const c = normalQuantile(1 - alpha, 0, 1);
	// Jackson–Mudholkar needs h₀ > 0; otherwise Box's (1954) g·χ²_h with g = θ₂/θ₁, h = θ₁²/θ₂.
	const qLimit =
		h0 > 0
			? th[0] *
				((c * Math.sqrt(2 * th[1] * h0 * h0)) / th[0] + 1 + (th[1] * h0 * (h0 - 1)) / (th[0] * th[0])) **
					(1 / h0)
			: (th[1] / th[0]) * chisqQuantile(1 - alpha, (th[0] * th[0]) / th[1]);
	const t2Limit = ((k * (n - 1) * (n + 1)) / (n * (n - k))) * fQuantile(1 - alpha, k, n - k);
	return {
		k,
		eig,
		n,
		t2Limit,
		qLimit,
		score(values) {
			const z = Float64Array.from(values, (v, j) => (v - mean[j]) / sd[j]);
			const residual = Float64Array.from(z);
			let t2 = 0;
			for (let a = 0; a < k; a++) {
				let t = 0;
				for (let j = 0; j < p; j++) t += z[j] * V.get(j, a);
				t2 += (t * t) / lam[a];
				for (let j = 0; j < p; j++) residual[j] -= t * V.get(j, a);
			}
			let q = 0;
			for (let j = 0; j < p; j++) q += residual[j] ** 2;
			return { t2, q, residual };
		}
	};
}
