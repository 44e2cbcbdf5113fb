import { EVD, Matrix, QrDecomposition, SVD } from 'ml-matrix';

/**
 * How the principal components are computed.
 * - `gram`: eigen-decomposition of the smaller cross-product matrix — Z Zᵀ (n × n) when n < p, with
 *   loadings back-projected (Wu, Massart & de Jong 1997, "The kernel PCA algorithms for wide data",
 *   Chemometr. Intell. Lab. Syst. 36:165), or Zᵀ Z (p × p) when n ≥ p.
 * - `svd`: singular value decomposition of Z. For n < p, Zᵀ is first reduced by QR and the n × n
 *   triangle is decomposed (Chan 1982, "An improved algorithm for computing the singular value
 *   decomposition", ACM TOMS 8:72), which avoids ml-matrix's slower SVD of the wide matrix.
 * Both use ml-matrix. The Gram route squares the condition number (eigenvalues below about 1e-12 of
 * the largest lose relative accuracy); the SVD route does not and is slower (see bench/engine.ts).
 */
export type PcaRoute = 'gram' | 'svd';

/** Eigen-structure of a centred, scaled golden matrix. */
export interface Decomposition {
	/** All non-zero eigenvalues of the covariance Zᵀ Z / (n − 1), largest first. */
	eigenvalues: Float64Array;
	/** The first k loading vectors as a flat p × k row-major array (entry (j, a) at j·k + a). */
	loadings(k: number): Float64Array;
}

const EPS = 2.220446049250313e-16;

function descendingOrder(values: ArrayLike<number>): number[] {
	return Array.from({ length: values.length }, (_, i) => i).sort((a, b) => values[b] - values[a]);
}

/** Flip each loading vector so its largest-magnitude entry is positive (deterministic signs). */
function fixSigns(P: Float64Array, p: number, k: number): void {
	for (let a = 0; a < k; a++) {
		let best = 0;
		for (let j = 0; j < p; j++) if (Math.abs(P[j * k + a]) > Math.abs(best)) best = P[j * k + a];
		if (best < 0) for (let j = 0; j < p; j++) P[j * k + a] = -P[j * k + a];
	}
}

/** Keep eigenvalues above λ₁ · max(n, p) · ε (the rank tolerance of LAPACK-style routines). */
function nonZero(sorted: number[], n: number, p: number): number {
	if (sorted.length === 0 || !(sorted[0] > 0)) return 0;
	// The Gram route leaves rounding noise of order ε·λ₁·size on zero eigenvalues; 16× covers it.
	const tol = sorted[0] * Math.max(n, p) * EPS * 16;
	let r = 0;
	while (r < sorted.length && sorted[r] > tol) r++;
	return r;
}

/** Loadings from left vectors V (n × m, column a at v(i, a)): P_ja = Σ_i Z_ij V_ia / s_a. */
function backProject(
	Z: Float64Array,
	n: number,
	p: number,
	k: number,
	v: (i: number, a: number) => number,
	s: (a: number) => number
): Float64Array {
	const P = new Float64Array(p * k);
	for (let i = 0; i < n; i++) {
		const row = i * p;
		for (let a = 0; a < k; a++) {
			const w = v(i, a) / s(a);
			if (w === 0) continue;
			for (let j = 0; j < p; j++) P[j * k + a] += Z[row + j] * w;
		}
	}
	fixSigns(P, p, k);
	return P;
}

function gram(Z: Float64Array, n: number, p: number): Decomposition {
	if (n < p) {
		// G = Z Zᵀ, symmetric: fill the upper triangle with plain loops (much faster than Matrix.mmul).
		const G = new Matrix(n, n);
		for (let i = 0; i < n; i++) {
			const oi = i * p;
			for (let l = i; l < n; l++) {
				const ol = l * p;
				let acc = 0;
				for (let j = 0; j < p; j++) acc += Z[oi + j] * Z[ol + j];
				G.set(i, l, acc);
				G.set(l, i, acc);
			}
		}
		const evd = new EVD(G, { assumeSymmetric: true });
		const mu = evd.realEigenvalues;
		const order = descendingOrder(mu);
		const sorted = order.map((i) => mu[i]);
		const r = nonZero(sorted, n, p);
		const eigenvalues = Float64Array.from(sorted.slice(0, r), (m) => m / (n - 1));
		const U = evd.eigenvectorMatrix;
		return {
			eigenvalues,
			loadings: (k) =>
				backProject(Z, n, p, k, (i, a) => U.get(i, order[a]), (a) => Math.sqrt(sorted[a]))
		};
	}
	const C = new Matrix(p, p);
	const acc = new Float64Array(p * p);
	for (let i = 0; i < n; i++) {
		const oi = i * p;
		for (let j = 0; j < p; j++) {
			const zj = Z[oi + j];
			if (zj === 0) continue;
			const oj = j * p;
			for (let l = j; l < p; l++) acc[oj + l] += zj * Z[oi + l];
		}
	}
	for (let j = 0; j < p; j++)
		for (let l = j; l < p; l++) {
			C.set(j, l, acc[j * p + l]);
			C.set(l, j, acc[j * p + l]);
		}
	const evd = new EVD(C, { assumeSymmetric: true });
	const mu = evd.realEigenvalues;
	const order = descendingOrder(mu);
	const sorted = order.map((i) => mu[i]);
	const r = nonZero(sorted, n, p);
	const V = evd.eigenvectorMatrix;
	return {
		eigenvalues: Float64Array.from(sorted.slice(0, r), (m) => m / (n - 1)),
		loadings: (k) => columnsAsLoadings(V, order, p, k)
	};
}

/** The first k columns of V (in `order`) as flat p × k loadings, signs fixed. */
function columnsAsLoadings(V: { get(i: number, j: number): number }, order: readonly number[], p: number, k: number): Float64Array {
	const P = new Float64Array(p * k);
	for (let j = 0; j < p; j++) for (let a = 0; a < k; a++) P[j * k + a] = V.get(j, order[a]);
	fixSigns(P, p, k);
	return P;
}

function svd(Z: Float64Array, n: number, p: number): Decomposition {
	if (n < p) {
		// Zᵀ = Q R, R = U S Vᵀ  ⇒  Z = V S (Q U)ᵀ: the loadings are Q U = Zᵀ V S⁻¹.
		const Zt = new Matrix(p, n);
		for (let i = 0; i < n; i++) for (let j = 0; j < p; j++) Zt.set(j, i, Z[i * p + j]);
		const R = new QrDecomposition(Zt).upperTriangularMatrix;
		const dec = new SVD(R, { computeLeftSingularVectors: false, computeRightSingularVectors: true });
		const s = dec.diagonal;
		const order = descendingOrder(s);
		const sq = order.map((i) => s[i] * s[i]);
		const r = nonZero(sq, n, p);
		const V = dec.rightSingularVectors;
		return {
			eigenvalues: Float64Array.from(sq.slice(0, r), (m) => m / (n - 1)),
			loadings: (k) =>
				backProject(Z, n, p, k, (i, a) => V.get(i, order[a]), (a) => s[order[a]])
		};
	}
	const M = Matrix.from1DArray(n, p, Z);
	const dec = new SVD(M, { computeLeftSingularVectors: false, computeRightSingularVectors: true });
	const s = dec.diagonal;
	const order = descendingOrder(s);
	const sq = order.map((i) => s[i] * s[i]);
	const r = nonZero(sq, n, p);
	const V = dec.rightSingularVectors;
	return {
		eigenvalues: Float64Array.from(sq.slice(0, r), (m) => m / (n - 1)),
		loadings: (k) => columnsAsLoadings(V, order, p, k)
	};
}

/**
 * Principal components of a centred, scaled golden matrix Z (n × p, flat row-major).
 *
 * Formula: covariance S = Zᵀ Z / (n − 1) = P Λ Pᵀ; eigenvalues λ_a = s_a² / (n − 1) with s_a the
 * singular values of Z; loadings P are the eigenvectors of S (right singular vectors of Z).
 * Source: Jackson (1991) "A User's Guide to Principal Components", ch. 1–2; routes as in
 * {@link PcaRoute}.
 *
 * @param Z centred and scaled data, n·p values, row i at i·p
 * @param n number of rows (≥ 2)
 * @param p number of columns (≥ 1)
 * @param route `gram` (default, faster) or `svd`
 * @returns the non-zero eigenvalues and a function giving the first k loadings
 * @throws RangeError on inconsistent sizes
 * @example decompose(Float64Array.of(-1, -1, 1, 1), 2, 2, 'gram').eigenvalues // → [4]
 */
export function decompose(Z: Float64Array, n: number, p: number, route: PcaRoute = 'gram'): Decomposition {
	if (!(n >= 2 && p >= 1) || Z.length !== n * p)
		throw new RangeError(`decompose: expected ${n} × ${p} values, got ${Z.length}`);
	return route === 'svd' ? svd(Z, n, p) : gram(Z, n, p);
}
