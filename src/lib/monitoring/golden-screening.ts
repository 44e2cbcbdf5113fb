/**
 * Robust screening of golden-wafer candidates, for the first baseline of a chamber × recipe step
 * when there is no model yet to tell an excursion from a good wafer.
 *
 * Method (spherical PCA with the ROBPCA outlier map):
 * 1. Robust scaling: each feature is centred on its median and divided by 1.4826 · MAD (the MAD made
 *    consistent for a normal σ); a feature whose MAD is 0 falls back to 1.253314 · mean absolute
 *    deviation, and a feature constant over the candidates is left out (it carries no information).
 * 2. Spherical PCA (Locantore et al. 1999, "Robust principal component analysis for functional data",
 *    Test 8(1):1–73): every scaled row is divided by its length, so no single wafer can pull the
 *    principal directions more than any other, and the directions are the PCA of those unit rows.
 *    Works for n < p (the Gram route of {@link decompose}).
 * 3. Robust spread of each component: the variance of a wafer's score is estimated as (1.4826 · MAD)²
 *    of the component's scores (Locantore et al. 1999, §3); k components explain ≥ 90 % of that
 *    robust variance (at most ⌊n/3⌋ and 10, so the outliers cannot get a direction of their own).
 * 4. The outlier map of Hubert, Rousseeuw & Vanden Branden (2005, "ROBPCA: a new approach to robust
 *    principal component analysis", Technometrics 47(1):64–79, §3): the score distance
 *    SD_i = √(Σ_a t_ia² / l_a) and the orthogonal distance OD_i = ‖z_i − P Pᵀ z_i‖, each against
 *    (med(D^{2/3}) + 1.4826 · MAD(D^{2/3}) · z_{1−α})^{3/2} (the Wilson–Hilferty approximation of a
 *    scaled χ², which the source uses for OD; used here for SD too, never below the source's
 *    √χ²_{k, 1−α}, because l_a from tens of wafers are noisy). A wafer beyond either cutoff is left
 *    out, with the features that drove it most (largest |robust z|).
 *
 * α is 0.5 % a cutoff here (the source uses 2.5 %): fewer good wafers lost (≈ 2.5 % of good wafers in
 * all, simulated at 40–60 wafers), and gross excursions — what the screen is for — lie far beyond.
 */
import { decompose } from './pca.ts';
import { chiSquareUpper, normalUpper } from './quantiles.ts';
import { MonitoringInputError } from './errors.ts';

export interface ScreeningOptions {
	featureNames: string[];
	/** Tail probability of each cutoff (default 0.005). */
	alpha?: number;
	/** Share of robust variance the components must explain (default 0.8). */
	explained?: number;
	/** Features named for an excluded wafer (default 3). */
	topFeatures?: number;
}

export interface ScreenedWafer {
	index: number;
	/** Score distance and its cutoff. */
	sd: number;
	/** Orthogonal distance and its cutoff. */
	od: number;
	excluded: boolean;
	/** Plain-language reason when excluded. */
	reason: string | null;
	/** Features with the largest robust |z| for this wafer, largest first. */
	leading: { feature: string; z: number }[];
}

export interface ScreeningResult {
	k: number;
	sdCutoff: number;
	odCutoff: number;
	/** Features left out because they are constant over the candidates. */
	constantFeatures: number;
	wafers: ScreenedWafer[];
	method: string;
}

export const SCREENING_METHOD =
	'Robust scaling (median, 1.4826·MAD) → spherical PCA (Locantore et al. 1999) → ROBPCA outlier map: score and orthogonal distances against χ² and Wilson–Hilferty cutoffs at α = 0.5 % (Hubert, Rousseeuw & Vanden Branden 2005)';

/** Median of a copy of the values. */
function median(values: ArrayLike<number>): number {
	const s = Float64Array.from(values).sort();
	const m = s.length >> 1;
	return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2;
}

/** 1.4826 · MAD, falling back to 1.253314 · mean absolute deviation when the MAD is 0 (Iglewicz & Hoaglin 1993). */
function robustSpread(values: ArrayLike<number>, centre: number): number {
	const dev = Float64Array.from(values, (v) => Math.abs(v - centre));
	const mad = median(dev);
	if (mad > 0) return 1.4826 * mad;
	let meanAd = 0;
	for (const d of dev) meanAd += d / dev.length;
	return 1.253314 * meanAd;
}

/**
 * Screen golden candidates for outliers (method in the module comment).
 *
 * @param rows the candidates' feature vectors (n ≥ 6, all of length p)
 * @returns per wafer its distances, whether it is left out and why
 * @throws MonitoringInputError on fewer than 6 rows, ragged rows or non-finite values
 * @example
 * // 29 wafers on a line plus one far off it: only the last is excluded
 * screenGoldenCandidates(rows, { featureNames }).wafers.filter((w) => w.excluded).map((w) => w.index) // → [29]
 */
export function screenGoldenCandidates(rows: ArrayLike<number>[], opts: ScreeningOptions): ScreeningResult {
	const n = rows.length;
	if (n < 6) throw new MonitoringInputError(`screening needs at least 6 candidates, got ${n}`);
	const p = rows[0].length;
	if (opts.featureNames.length !== p) throw new MonitoringInputError(`${opts.featureNames.length} feature names for ${p} features`);
	for (let i = 0; i < n; i++) {
		if (rows[i].length !== p) throw new MonitoringInputError(`row ${i} has ${rows[i].length} values, expected ${p}`);
		for (let j = 0; j < p; j++) if (!Number.isFinite(rows[i][j])) throw new MonitoringInputError(`row ${i}, feature ${opts.featureNames[j]} is not finite`);
	}
	const alpha = opts.alpha ?? 0.005;
	// 1. robust scaling; constant features dropped
	const keep: number[] = [];
	const centre: number[] = [];
	const spread: number[] = [];
	const col = new Float64Array(n);
	for (let j = 0; j < p; j++) {
		for (let i = 0; i < n; i++) col[i] = rows[i][j];
		const m = median(col);
		const s = robustSpread(col, m);
		if (s > 0) {
			keep.push(j);
			centre.push(m);
			spread.push(s);
		}
	}
	const q = keep.length;
	if (q === 0) throw new MonitoringInputError('every feature is constant over the candidates');
	const Z = new Float64Array(n * q);
	for (let i = 0; i < n; i++) for (let c = 0; c < q; c++) Z[i * q + c] = (rows[i][keep[c]] - centre[c]) / spread[c];
	// 2. spherical PCA: directions from the unit rows
	const U = new Float64Array(n * q);
	for (let i = 0; i < n; i++) {
		let norm = 0;
		for (let c = 0; c < q; c++) norm += Z[i * q + c] ** 2;
		norm = Math.sqrt(norm);
		for (let c = 0; c < q; c++) U[i * q + c] = norm > 0 ? Z[i * q + c] / norm : 0;
	}
	const dec = decompose(U, n, q, 'gram');
	const maxK = Math.max(1, Math.min(10, Math.floor(n / 3), dec.eigenvalues.length));
	const P = dec.loadings(maxK);
	// 3. scores of the scaled (not unit) rows, and each component's robust variance
	const T = new Float64Array(n * maxK);
	for (let i = 0; i < n; i++)
		for (let a = 0; a < maxK; a++) {
			let s = 0;
			for (let c = 0; c < q; c++) s += Z[i * q + c] * P[c * maxK + a];
			T[i * maxK + a] = s;
		}
	const lambda = Array.from({ length: maxK }, (_, a) => {
		const t = Float64Array.from({ length: n }, (_, i) => T[i * maxK + a]);
		return robustSpread(t, median(t)) ** 2;
	});
	// Robust total variance: Σ over features of their robust variance (1 each after scaling).
	const explained = opts.explained ?? 0.9;
	let k = maxK;
	let cum = 0;
	for (let a = 0; a < maxK; a++) {
		cum += lambda[a];
		if (cum >= explained * q) {
			k = a + 1;
			break;
		}
	}
	// 4. distances and cutoffs
	const sd = new Float64Array(n);
	const od = new Float64Array(n);
	for (let i = 0; i < n; i++) {
		let s = 0;
		for (let a = 0; a < k; a++) if (lambda[a] > 0) s += T[i * maxK + a] ** 2 / lambda[a];
		sd[i] = Math.sqrt(s);
		let o = 0;
		for (let c = 0; c < q; c++) {
			let r = Z[i * q + c];
			for (let a = 0; a < k; a++) r -= T[i * maxK + a] * P[c * maxK + a];
			o += r * r;
		}
		od[i] = Math.sqrt(o);
	}
	// Both cutoffs from the distances themselves through the Wilson–Hilferty cube root (a scaled χ²
	// is near normal after it): SD² is χ²_k only when the λ_a are exact, and MAD-based λ_a from 20–60
	// wafers with n < p are not, so √χ²_{k,1−α} left out 10 % of good wafers in simulation
	// (40 seeded sets of 60 × 500, bench-sized check in tests/unit/monitoring/golden-screening.test.ts).
	const whCutoff = (d: Float64Array) => {
		const d23 = Float64Array.from(d, (v) => v ** (2 / 3));
		const m = median(d23);
		return (m + robustSpread(d23, m) * normalUpper(alpha)) ** 1.5;
	};
	const sdCutoff = Math.max(whCutoff(sd), Math.sqrt(chiSquareUpper(alpha, k)));
	const odCutoff = whCutoff(od);
	const top = opts.topFeatures ?? 3;
	const wafers: ScreenedWafer[] = [];
	for (let i = 0; i < n; i++) {
		const byOd = od[i] > odCutoff && odCutoff > 0;
		const bySd = sd[i] > sdCutoff;
		const order = Array.from({ length: q }, (_, c) => c).sort((a, b) => Math.abs(Z[i * q + b]) - Math.abs(Z[i * q + a]));
		const leading = order.slice(0, top).map((c) => ({ feature: opts.featureNames[keep[c]], z: Z[i * q + c] }));
		let reason: string | null = null;
		if (byOd || bySd) {
			const parts: string[] = [];
			if (byOd) parts.push(`varies in a way the other candidates do not (orthogonal distance ${(od[i] / odCutoff).toFixed(1)}× its cutoff)`);
			if (bySd) parts.push(`far out along the candidates' own variation (score distance ${(sd[i] / sdCutoff).toFixed(1)}× its cutoff)`);
			const lead = leading.map((l) => `${l.feature} ${l.z >= 0 ? '+' : '−'}${Math.abs(l.z).toFixed(1)} robust sd`).join(', ');
			reason = `screened out: ${parts.join('; ')}; leading: ${lead}`;
		}
		wafers.push({ index: i, sd: sd[i], od: od[i], excluded: byOd || bySd, reason, leading });
	}
	return { k, sdCutoff, odCutoff, constantFeatures: p - q, wafers, method: SCREENING_METHOD };
}
