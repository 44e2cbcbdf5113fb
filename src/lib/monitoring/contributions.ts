import type { BaselineModel } from './model';
import { chiSquareUpper } from './quantiles';
import { assertFiniteRow, type Row } from './scaling';

/**
 * Which contributions to compute.
 * - `rbc`: reconstruction-based contributions to T² and to Q (the drill-down default: they point at
 *   the faulty variable even when variables are correlated).
 * - `complete`: the complete decomposition of T² (parts sum to T²) with e_j² for Q (which is the
 *   complete decomposition of Q, since I − PPᵀ is idempotent).
 * - `q`: e_j² for Q only.
 */
export type ContributionKind = 'rbc' | 'complete' | 'q';

/** Per-feature contributions, keyed by feature name. */
export interface Contributions {
	kind: ContributionKind;
	/**
	 * Contributions to T²: null for kind `q`, and null when the model keeps one component (k = 1),
	 * where every feature's RBC to T² equals T² and no ranking means anything
	 * ({@link t2ContributionsUninformative}).
	 */
	t2: Record<string, number> | null;
	/** Contributions to Q. */
	q: Record<string, number>;
}

/** One row of a ranked contribution list. */
export interface RankedContribution {
	feature: string;
	value: number;
	/** value ÷ the sum over all features (0 when the sum is 0). */
	share: number;
}

/**
 * Per-feature contributions of a wafer to T² and Q.
 *
 * Source: see each formula. Formulas, with z the scaled row, t = Pᵀz, e = z − Pt, D = P Λ⁻¹ Pᵀ and ξ_j the j-th unit vector:
 * - Q, plain and complete: c_j = e_j² (Σ_j c_j = Q) — Westerhuis, Gurden & Smilde (2000)
 *   Chemometr. Intell. Lab. Syst. 51:95; Alcala & Qin (2011) J. Process Control 21:322, table 1.
 * - T², complete decomposition: c_j = (ξ_jᵀ D^{1/2} z)² = (Σ_a P_ja t_a / √λ_a)² (Σ_j c_j = T²) —
 *   Alcala & Qin (2011), eq. for CDC, and Alcala & Qin (2009).
 * - RBC (reconstruction-based): RBC_j = (ξ_jᵀ M z)² / (ξ_jᵀ M ξ_j): for T², M = D, so
 *   RBC_j = (Σ_a P_ja t_a/λ_a)² / Σ_a P_ja²/λ_a; for Q, M = I − PPᵀ, so RBC_j = e_j² / (1 − Σ_a P_ja²)
 *   — Alcala & Qin (2009) "Reconstruction-based contribution for process monitoring", Automatica
 *   45:1593, eqs. 11 and 14. Where ξ_jᵀMξ_j = 0 (a feature entirely in, or outside, the subspace)
 *   the numerator is 0 too and the contribution is reported as 0.
 *
 * @param model the baseline
 * @param x one value per feature, in `model.featureNames` order
 * @param kind `rbc` (default), `complete` or `q`
 * @returns contributions keyed by feature name (t2 null for kind `q` or k = 1)
 * @throws MonitoringInputError naming the feature when a value is missing or non-finite
 * @example rankContributions(contributions(model, row).q)[0].feature // → the feature that drove Q
 */
export function contributions(model: BaselineModel, x: Row, kind: ContributionKind = 'rbc'): Contributions {
	assertFiniteRow(x, model.featureNames);
	const { p, k, mean, scale, loadings: P, eigenvalues: lam, featureNames } = model;
	const z = new Float64Array(p);
	const t = new Float64Array(k);
	for (let j = 0; j < p; j++) {
		z[j] = (x[j] - mean[j]) / scale[j];
		for (let a = 0; a < k; a++) t[a] += P[j * k + a] * z[j];
	}
	const q: Record<string, number> = {};
	const t2: Record<string, number> | null = kind === 'q' || k === 1 ? null : {};
	const sqrtLam = Float64Array.from(lam.subarray(0, k), Math.sqrt);
	for (let j = 0; j < p; j++) {
		const o = j * k;
		let fit = 0;
		let leverage = 0;
		let dz = 0;
		let dHalfZ = 0;
		let djj = 0;
		for (let a = 0; a < k; a++) {
			const pja = P[o + a];
			fit += pja * t[a];
			leverage += pja * pja;
			dz += (pja * t[a]) / lam[a];
			dHalfZ += (pja * t[a]) / sqrtLam[a];
			djj += (pja * pja) / lam[a];
		}
		const e = z[j] - fit;
		const f = featureNames[j];
		if (kind === 'rbc') {
			const m = 1 - leverage;
			q[f] = m > 1e-12 ? (e * e) / m : 0;
			if (t2) t2[f] = djj > 0 ? (dz * dz) / djj : 0;
		} else {
			q[f] = e * e;
			if (t2) t2[f] = dHalfZ * dHalfZ;
		}
	}
	return { kind, t2, q };
}

/**
 * Order contributions from largest to smallest, with each one's share of the total.
 *
 * Formula: share_j = c_j / Σ c. Source: common practice (contribution bar charts, Miller, Swanson &
 * Heckler 1998, Appl. Math. Comput. Sci. 8:775).
 *
 * @param values feature → contribution (non-negative)
 * @param top keep only the first `top` (default: all)
 * @returns ranked list
 * @throws nothing
 * @example rankContributions({ a: 1, b: 3 }) // → [{ feature: 'b', value: 3, share: 0.75 }, { feature: 'a', value: 1, share: 0.25 }]
 */
export function rankContributions(values: Readonly<Record<string, number>>, top?: number): RankedContribution[] {
	let sum = 0;
	for (const v of Object.values(values)) sum += v;
	const ranked = Object.entries(values)
		.map(([feature, value]) => ({ feature, value, share: sum > 0 ? value / sum : 0 }))
		.sort((a, b) => b.value - a.value);
	return top === undefined ? ranked : ranked.slice(0, top);
}

/** Per-feature control limits of reconstruction-based contributions (see {@link contributionLimits}). */
export interface ContributionLimits {
	alpha: number;
	/**
	 * Limit of RBC to T², the same for every feature: χ²_α(1). Null when k = 1, where every feature's
	 * RBC to T² equals T² itself (see {@link t2ContributionsUninformative}).
	 */
	t2: number | null;
	/** Limit of RBC to Q, per feature name. */
	q: Record<string, number>;
}

/**
 * Whether T² contributions can say which feature moved. With one retained component, T² = t²/λ and
 * every feature's RBC to T² is (P_j t/λ)² / (P_j²/λ) = t²/λ = T²: all equal, so a ranking would only
 * be the order of the loadings, not evidence about this wafer.
 * Source: follows from the RBC formula of Alcala & Qin (2009) Automatica 45:1593, eq. 11.
 * @param model the baseline
 * @returns a sentence saying why, or null when T² contributions are informative (k ≥ 2)
 * @example t2ContributionsUninformative(modelWithK1) // → 'With one principal component …'
 */
export function t2ContributionsUninformative(model: Pick<BaselineModel, 'k'>): string | null {
	return model.k === 1
		? 'With one principal component every feature’s contribution to T² equals T² itself (RBC_j = t²/λ for all j), so no feature can be ranked by it: read the Q contributions and the spectrum instead.'
		: null;
}

/**
 * Control limits of the reconstruction-based contributions, per feature.
 *
 * Formula: for an index x ᵀ M x, RBC_j = (ξ_jᵀ M x)² / (ξ_jᵀ M ξ_j). For x ~ N(0, S), ξ_jᵀ M x is normal
 * with variance ξ_jᵀ M S M ξ_j, so RBC_j ~ (ξ_jᵀ M S M ξ_j / ξ_jᵀ M ξ_j) · χ²(1) and its limit at α is
 * (ξ_jᵀ M S M ξ_j / ξ_jᵀ M ξ_j) · χ²_α(1) — Alcala & Qin (2011) J. Process Control 21:322, §3 (RBC
 * control limits), following Alcala & Qin (2009). With the model's scaled golden covariance
 * S = P Λ Pᵀ + P̃ Λ̃ P̃ᵀ:
 * - T² (M = P Λ⁻¹ Pᵀ): M S M = M, so the limit is χ²_α(1) for every feature;
 * - Q (M = I − P Pᵀ): M S M = P̃ Λ̃ P̃ᵀ, whose diagonal is S_jj − Σ_a λ_a P_ja², with S_jj the scaled
 *   golden variance (sd_j / scale_j)²; the limit is (S_jj − Σ_a λ_a P_ja²) / (1 − Σ_a P_ja²) · χ²_α(1).
 * The golden residual variance is an in-sample figure: with few golden wafers and many features
 * (n < p) it is smaller than a new wafer's, and the Q limits are then too tight — a mark means "look
 * here", not proof (README, diagnosis).
 *
 * @param model the baseline
 * @param alpha significance level (default the model's α)
 * @returns the T² limit (null when k = 1) and the Q limit of each feature
 * @throws RangeError when α is not in (0, 1)
 * @example contributionLimits(model).t2 // → 6.6349 (χ²_0.01(1), NIST/SEMATECH table 1.3.6.7.4)
 */
export function contributionLimits(model: BaselineModel, alpha: number = model.alpha): ContributionLimits {
	const chi = chiSquareUpper(alpha, 1);
	const { p, k, loadings: P, eigenvalues: lam, featureNames, sd, scale } = model;
	const q: Record<string, number> = {};
	for (let j = 0; j < p; j++) {
		let lev = 0;
		let explained = 0;
		for (let a = 0; a < k; a++) {
			lev += P[j * k + a] ** 2;
			explained += lam[a] * P[j * k + a] ** 2;
		}
		const sjj = scale[j] > 0 ? (sd[j] / scale[j]) ** 2 : 0;
		const m = 1 - lev;
		q[featureNames[j]] = m > 1e-12 ? (Math.max(0, sjj - explained) / m) * chi : 0;
	}
	return { alpha, t2: k === 1 ? null : chi, q };
}
