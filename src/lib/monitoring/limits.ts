import { MonitoringInputError } from './errors';
import { chiSquareUpper, fUpper, normalUpper, tTwoSided } from './quantiles';

/** Which approximation gives the Q (SPE) limit. */
export type QLimitMethod = 'jackson-mudholkar' | 'box' | 'three-moment';

/** Sums of powers of the residual eigenvalues: θ_i = Σ_{a>k} λ_a^i, i = 1, 2, 3. */
export interface ResidualMoments {
	theta1: number;
	theta2: number;
	theta3: number;
	/** h0 = 1 − 2 θ1 θ3 / (3 θ2²) (Jackson & Mudholkar 1979). */
	h0: number;
}

/**
 * Hotelling T² upper control limit for a new (future) observation scored against a k-component
 * model fitted on n golden observations.
 *
 * Formula: T²_α = k (n − 1)(n + 1) / (n (n − k)) · F_α(k, n − k).
 * Source: Tracy, Young & Mason (1992) "Multivariate control charts for individual observations",
 * J. Quality Technology 24:88, eq. for future observations; Jackson (1991) "A User's Guide to
 * Principal Components", §1.7.
 *
 * @param k number of retained components (1 ≤ k ≤ n − 2)
 * @param n number of golden observations
 * @param alpha false-alarm probability, 0 < α < 1
 * @returns the limit
 * @throws RangeError if k, n or α is out of range
 * @example t2Limit(11, 500, 0.01) // → 25.6902… (Tennessee Eastman d00, k = 11)
 */
export function t2Limit(k: number, n: number, alpha: number): number {
	if (!(Number.isInteger(k) && Number.isInteger(n) && k >= 1 && k <= n - 2))
		throw new RangeError(`T² limit needs integers 1 ≤ k ≤ n − 2, got k = ${k}, n = ${n}`);
	return ((k * (n - 1) * (n + 1)) / (n * (n - k))) * fUpper(alpha, k, n - k);
}

/**
 * θ1, θ2, θ3 and h0 of the residual eigenvalues λ_{k+1}, …, λ_r.
 *
 * Formula: θ_i = Σ_{a>k} λ_a^i; h0 = 1 − 2θ1θ3 / (3θ2²).
 * Source: Jackson & Mudholkar (1979) "Control procedures for residuals associated with principal
 * component analysis", Technometrics 21:341.
 *
 * @param residualEigenvalues eigenvalues not retained in the model (all > 0)
 * @returns the moments
 * @throws MonitoringInputError when there is no residual eigenvalue (Q would be identically 0)
 * @example residualMoments([2, 1]).theta2 // → 5
 */
export function residualMoments(residualEigenvalues: ArrayLike<number>): ResidualMoments {
	let theta1 = 0;
	let theta2 = 0;
	let theta3 = 0;
	for (let a = 0; a < residualEigenvalues.length; a++) {
		const l = residualEigenvalues[a];
		theta1 += l;
		theta2 += l * l;
		theta3 += l * l * l;
	}
	for (let a = 0; a < residualEigenvalues.length; a++)
		if (!(residualEigenvalues[a] >= 0))
			throw new MonitoringInputError(`residual eigenvalue ${a} is ${residualEigenvalues[a]}: must be ≥ 0`);
	if (!(theta1 > 0))
		throw new MonitoringInputError(
			'no residual variance left after the retained components: choose fewer components so Q has a limit'
		);
	return { theta1, theta2, theta3, h0: 1 - (2 * theta1 * theta3) / (3 * theta2 * theta2) };
}

/**
 * Q (SPE) limit after Jackson & Mudholkar (1979).
 *
 * Formula: Q_α = θ1 [ z_α √(2θ2h0²) / θ1 + 1 + θ2h0(h0 − 1) / θ1² ]^(1/h0), z_α the upper normal
 * quantile. When h0 ≤ 0 (one residual eigenvalue dominating many small ones) the power transform
 * behind the formula breaks down — the textbook expression then gives limits far below the true
 * quantile, and with the sign of the z term corrected it overshoots (false-alarm rates of 0.1–0.8 %
 * at α = 1 %, simulated in tests/unit/monitoring/limits.test.ts) — so the three-moment form
 * ({@link qLimitThreeMoment}) is returned instead; the model's `residual.h0` says which applied.
 * Source: Jackson & Mudholkar (1979) Technometrics 21:341, eq. 3.4; Jackson (1991) §2.7.
 *
 * @param residualEigenvalues eigenvalues not retained in the model
 * @param alpha false-alarm probability, 0 < α < 1
 * @returns the limit
 * @throws MonitoringInputError when there is no residual eigenvalue; RangeError on a bad α
 * @example qLimitJacksonMudholkar([1, 1, 1, 1], 0.05) // → 9.4560… (the exact χ²₄ value is 9.4877)
 */
export function qLimitJacksonMudholkar(residualEigenvalues: ArrayLike<number>, alpha: number): number {
	const { theta1, theta2, h0 } = residualMoments(residualEigenvalues);
	const z = normalUpper(alpha);
	if (!(h0 > 0)) return qLimitThreeMoment(residualEigenvalues, alpha);
	const bracket = (z * Math.sqrt(2 * theta2 * h0 * h0)) / theta1 + 1 + (theta2 * h0 * (h0 - 1)) / (theta1 * theta1);
	if (!(bracket > 0)) return qLimitThreeMoment(residualEigenvalues, alpha);
	return theta1 * Math.pow(bracket, 1 / h0);
}

/**
 * Q (SPE) limit from Box's (1954) scaled χ² approximation, as used by Nomikos & MacGregor (1995).
 *
 * Formula: Q_α = g · χ²_α(h), g = θ2 / θ1, h = θ1² / θ2 (h need not be an integer).
 * Source: Box (1954) Ann. Math. Statist. 25:290, theorem 3.1; Nomikos & MacGregor (1995)
 * "Multivariate SPC charts for monitoring batch processes", Technometrics 37:41.
 *
 * @param residualEigenvalues eigenvalues not retained in the model
 * @param alpha false-alarm probability, 0 < α < 1
 * @returns the limit
 * @throws MonitoringInputError when there is no residual eigenvalue; RangeError on a bad α
 * @example qLimitBox([1, 1, 1, 1], 0.05) // → 9.4877… (exactly χ²₄ at 5 %)
 */
export function qLimitBox(residualEigenvalues: ArrayLike<number>, alpha: number): number {
	const { theta1, theta2 } = residualMoments(residualEigenvalues);
	return (theta2 / theta1) * chiSquareUpper(alpha, (theta1 * theta1) / theta2);
}

/**
 * Q (SPE) limit from a shifted χ² matching the first three moments of Q = Σ λ_a χ²₁.
 *
 * Formula: Q_α = θ1 + (θ3/θ2) · (χ²_α(h′) − h′), h′ = θ2³ / θ3² (mean θ1, variance 2θ2 and third
 * central moment 8θ3 of Q are matched exactly).
 * Source: Imhof (1961) "Computing the distribution of quadratic forms in normal variables",
 * Biometrika 48:419, §4 (Pearson's three-moment approximation); the central case of Liu, Tang & Zhang
 * (2009) Comput. Stat. Data Anal. 53:853. Accurate where Jackson–Mudholkar is not (h0 ≤ 0).
 *
 * @param residualEigenvalues eigenvalues not retained in the model
 * @param alpha false-alarm probability, 0 < α < 1
 * @returns the limit
 * @throws MonitoringInputError when there is no residual eigenvalue; RangeError on a bad α
 * @example qLimitThreeMoment([1, 1, 1, 1], 0.05) // → 9.4877… (exact for equal eigenvalues)
 */
export function qLimitThreeMoment(residualEigenvalues: ArrayLike<number>, alpha: number): number {
	const { theta1, theta2, theta3 } = residualMoments(residualEigenvalues);
	const h = (theta2 * theta2 * theta2) / (theta3 * theta3);
	return theta1 + (theta3 / theta2) * (chiSquareUpper(alpha, h) - h);
}

/**
 * Q limit by the chosen method (Jackson–Mudholkar by default).
 *
 * Source: Jackson & Mudholkar (1979); Box (1954); Imhof (1961) — see the three functions.
 *
 * @param residualEigenvalues eigenvalues not retained in the model
 * @param alpha false-alarm probability, 0 < α < 1
 * @param method `jackson-mudholkar` (default), `box` or `three-moment`
 * @returns the limit
 * @throws as {@link qLimitJacksonMudholkar} / {@link qLimitBox}
 * @example qLimit([1, 1, 1, 1], 0.05, 'box') // → 9.4877…
 */
export function qLimit(
	residualEigenvalues: ArrayLike<number>,
	alpha: number,
	method: QLimitMethod = 'jackson-mudholkar'
): number {
	if (method === 'box') return qLimitBox(residualEigenvalues, alpha);
	if (method === 'three-moment') return qLimitThreeMoment(residualEigenvalues, alpha);
	if (method === 'jackson-mudholkar') return qLimitJacksonMudholkar(residualEigenvalues, alpha);
	throw new RangeError(`unknown Q limit method "${method}"`);
}

/** Weights and distribution of the combined index φ. */
export interface PhiParameters {
	/** Weight of T² in φ: 1 / χ²_α(k). */
	t2Weight: number;
	/** Weight of Q in φ: 1 / Q_α. */
	qWeight: number;
	/** Scale g_φ of the χ² approximation. */
	g: number;
	/** Degrees of freedom h_φ of the χ² approximation. */
	h: number;
}

/**
 * Parameters of the combined index φ = Q / δ² + T² / τ² (Yue & Qin 2001).
 *
 * Formula: τ² = χ²_α(k), δ² = the Q limit at α; φ is approximately g_φ χ²(h_φ) with
 * g_φ = (k/τ⁴ + θ2/δ⁴) / (k/τ² + θ1/δ²) and h_φ = (k/τ² + θ1/δ²)² / (k/τ⁴ + θ2/δ⁴).
 * Source: Yue & Qin (2001) "Reconstruction-based fault identification using a combined index",
 * Ind. Eng. Chem. Res. 40:4403, eqs. 17–20 (Box 1954 approximation).
 *
 * @param k number of retained components
 * @param moments residual moments ({@link residualMoments})
 * @param qLimitAlpha the Q limit δ² at the model's α
 * @param alpha the model's α (for τ²)
 * @returns weights, g_φ and h_φ
 * @throws RangeError on a bad α or k
 * @example phiParameters(2, residualMoments([1, 1]), 9.21, 0.01).t2Weight // → 1 / 9.2103…
 */
export function phiParameters(
	k: number,
	moments: ResidualMoments,
	qLimitAlpha: number,
	alpha: number
): PhiParameters {
	if (!(k >= 1)) throw new RangeError(`φ needs k ≥ 1, got ${k}`);
	const t2Weight = 1 / chiSquareUpper(alpha, k);
	const qWeight = 1 / qLimitAlpha;
	const tr1 = k * t2Weight + moments.theta1 * qWeight;
	const tr2 = k * t2Weight * t2Weight + moments.theta2 * qWeight * qWeight;
	return { t2Weight, qWeight, g: tr2 / tr1, h: (tr1 * tr1) / tr2 };
}

/**
 * Upper limit of the combined index φ at level α.
 *
 * Formula: φ_α = g_φ · χ²_α(h_φ).
 * Source: Yue & Qin (2001) Ind. Eng. Chem. Res. 40:4403, eq. 20.
 *
 * @param params from {@link phiParameters}
 * @param alpha false-alarm probability, 0 < α < 1
 * @returns the limit
 * @throws RangeError on a bad α
 * @example phiLimit({ t2Weight: 0.1, qWeight: 0.1, g: 0.1, h: 20 }, 0.01) // → 3.7566…
 */
export function phiLimit(params: PhiParameters, alpha: number): number {
	return params.g * chiSquareUpper(alpha, params.h);
}

/** A cube-root normal law fitted to out-of-sample values, for a prediction limit. */
export interface CubeRootLaw {
	/** Mean and sd (n − 1) of the values' cube roots. */
	mean: number;
	sd: number;
	/** Number of values. */
	n: number;
	/** Degrees of freedom of the Student t in the prediction limit: (n − 1)/2. */
	nu: number;
}

/**
 * Fit the cube-root law of positive out-of-sample statistics (T², Q, φ of cross-validated golden wafers).
 *
 * Formula: u_i = x_i^(1/3); mean ū and sd s_u (n − 1) of the u_i. The cube root makes a χ²-like
 * (quadratic-form) statistic nearly normal for any degrees of freedom (Wilson & Hilferty 1931, "The
 * distribution of chi-square", PNAS 17:684), which a moment-matched g·χ²(h) also assumes but whose
 * tail is then read off a normal law with a prediction bound. ν = (n − 1)/2: the out-of-sample values
 * share most of their training wafers and are not independent; halving the degrees of freedom was
 * chosen by simulation (bench/calibration.ts) and is our calibration, not a published constant.
 *
 * @param values at least 3 finite values ≥ 0, not all equal
 * @returns the law
 * @throws MonitoringInputError on fewer than 3 values, a negative or non-finite value, or no spread
 * @example cubeRootLaw([1, 8, 27]).mean // → 2
 */
export function cubeRootLaw(values: ArrayLike<number>): CubeRootLaw {
	const n = values.length;
	if (n < 3) throw new MonitoringInputError(`a prediction limit needs at least 3 values, got ${n}`);
	let s = 0;
	for (let i = 0; i < n; i++) {
		const v = values[i];
		if (!(Number.isFinite(v) && v >= 0)) throw new MonitoringInputError(`value ${i} is ${v}: must be finite and ≥ 0`);
		s += Math.cbrt(v);
	}
	const mean = s / n;
	let ss = 0;
	for (let i = 0; i < n; i++) ss += (Math.cbrt(values[i]) - mean) ** 2;
	const sd = Math.sqrt(ss / (n - 1));
	if (!(sd > 0)) throw new MonitoringInputError('the out-of-sample statistics do not vary: no limit can be fitted');
	return { mean, sd, n, nu: (n - 1) / 2 };
}

/**
 * Upper prediction limit for a new wafer's statistic from its cube-root law.
 *
 * Formula: L_α = (ū + t_α(ν) · s_u · √(1 + 2/n))³, t_α(ν) the upper-α Student t quantile: the
 * normal-theory prediction bound for one new observation (Hahn & Meeker 1991, "Statistical Intervals",
 * §4.4, there with ν = n − 1 and √(1 + 1/n)), on the Wilson–Hilferty scale; ν and the factor 2/n allow
 * for the dependence of cross-validated values (see {@link cubeRootLaw}).
 *
 * @param law from {@link cubeRootLaw}
 * @param alpha upper-tail probability, 0 < α < 0.5
 * @returns the limit
 * @throws RangeError on a bad α
 * @example cubeRootPredictionLimit({ mean: 2, sd: 0.1, n: 21, nu: 10 }, 0.01) // → 11.997… (scipy: (2 + t.ppf(0.99, 10) · 0.1 · √(1 + 2/21))³)
 */
export function cubeRootPredictionLimit(law: CubeRootLaw, alpha: number): number {
	if (!(alpha > 0 && alpha < 0.5)) throw new RangeError(`α must lie in (0, 0.5), got ${alpha}`);
	const t = tTwoSided(2 * alpha, law.nu);
	const u = law.mean + t * law.sd * Math.sqrt(1 + 2 / law.n);
	return u > 0 ? u * u * u : 0;
}
