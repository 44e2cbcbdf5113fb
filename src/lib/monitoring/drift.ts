import erfc from '@stdlib/math-base-special-erfc';
import { chiSquareUpper, normalUpper } from './quantiles';
import { ewma, type EwmaChart } from './ewma';
import { ewmaInflation, type EwmaInflation } from './ewma-autocorrelation';

/**
 * The drift statistic of the alarm rules: an EWMA of normal scores of the T²/limit and Q/limit
 * ratios (the ratios themselves are right-skewed, so a normal-theory EWMA on them gives far too many
 * signals: in-control ARL ≈ 205 wafers where ≈ 1,100 was promised, see the monitoring README).
 */

/** Standard normal upper tail P(Z > z) = erfc(z/√2)/2. */
export function normalTail(z: number): number {
	return 0.5 * erfc(z / Math.SQRT2);
}

/**
 * Shape (degrees of freedom) of a scaled χ² matched to a ratio's in-control mean and sd: for
 * X = g·χ²_h, mean = g·h and var = 2g²h, so h = 2·mean²/sd² (moment matching as in Box 1954,
 * "Some theorems on quadratic forms applied in the study of analysis of variance problems I",
 * Ann. Math. Statist. 25:290, the approximation behind the Q limit of Jackson & Mudholkar 1979).
 * Clipped to [1, 200]: below 1 the Wilson–Hilferty score is poor, above 200 the shape no longer
 * matters (the score is then almost linear in the ratio).
 *
 * @param mean in-control mean of the ratio (> 0)
 * @param sd in-control sd of the ratio (> 0)
 * @returns h in [1, 200]
 * @throws RangeError on a non-positive or non-finite mean or sd
 * @example ratioShape(1, 1) // → 2
 */
export function ratioShape(mean: number, sd: number): number {
	if (!(mean > 0 && Number.isFinite(mean))) throw new RangeError(`the mean must be finite and > 0, got ${mean}`);
	if (!(sd > 0 && Number.isFinite(sd))) throw new RangeError(`the sd must be finite and > 0, got ${sd}`);
	return Math.min(200, Math.max(1, (2 * mean * mean) / (sd * sd)));
}

/**
 * Normal score of a statistic/limit ratio by the Wilson–Hilferty cube-root transform, anchored at
 * the limit. With the statistic ≈ g·χ²_h and the limit its (1 − α) quantile g·χ²_h(1 − α), the ratio
 * r corresponds to χ² = r·χ²_h(1 − α), and
 *
 *   z = [ (r·χ²_h(1 − α)/h)^{1/3} − (1 − 2/(9h)) ] / √(2/(9h))
 *
 * is ≈ N(0, 1) in control. Source: Wilson & Hilferty (1931) "The distribution of chi-square",
 * PNAS 17:684. Anchoring at the limit (not at an estimated mean and sd) means that whatever h is
 * used, r = 1 maps to z ≈ z_{1−α}: the limit's own calibration carries over, and an error in h only
 * bends the scale away from the limit (measured in tests/unit/monitoring/drift.test.ts).
 *
 * @param ratio statistic ÷ limit (≥ 0)
 * @param h degrees of freedom of the matched χ² (> 0), e.g. from {@link ratioShape}
 * @param alpha the limit's α (0 < α < 1)
 * @returns the normal score
 * @throws RangeError on a negative or non-finite ratio, a bad h or α
 * @example ratioScore(1, 3, 0.01) // → ≈ 2.33 (χ²_3 at 0.99 is 11.34; the cube root gives 2.33)
 */
export function ratioScore(ratio: number, h: number, alpha: number): number {
	if (!(ratio >= 0 && Number.isFinite(ratio))) throw new RangeError(`the ratio must be finite and ≥ 0, got ${ratio}`);
	return scoreOf(ratio, h, chiSquareUpper(alpha, h));
}

/** ratioScore with the χ² quantile precomputed (hot loop). */
function scoreOf(ratio: number, h: number, quantile: number): number {
	if (!(h > 0)) throw new RangeError(`h must be > 0, got ${h}`);
	const v = 2 / (9 * h);
	return (Math.cbrt((ratio * quantile) / h) - (1 - v)) / Math.sqrt(v);
}

/** A ratio → score map for one statistic of one baseline. */
export interface RatioScale {
	h: number;
	alpha: number;
	score: (ratio: number) => number;
	/** The inverse: the ratio whose score is z (0 below the score of a zero ratio). */
	ratio: (z: number) => number;
}

/**
 * The score map of one statistic: {@link ratioScore} with the χ² quantile computed once.
 * @param h shape (> 0)
 * @param alpha the limit's α
 * @returns the map
 * @throws RangeError on a bad h or α
 * @example ratioScale(3, 0.01).score(1) // → ≈ 2.33
 */
export function ratioScale(h: number, alpha: number): RatioScale {
	const quantile = chiSquareUpper(alpha, h);
	const v = 2 / (9 * h);
	return {
		h,
		alpha,
		score: (r) => scoreOf(Math.max(0, r), h, quantile),
		ratio: (z) => (h / quantile) * Math.max(0, 1 - v + z * Math.sqrt(v)) ** 3
	};
}

/**
 * The in-control centre and spread of the scores of a ratio whose in-control mean is `mean` (the
 * cross-validated golden wafers' mean ratio), under the same matched χ² (shape h). With
 * r = (mean/h)·χ²_h, the score is z = (κ·(χ²_h/h)^{1/3} − (1 − v))/√v with κ = (mean·χ²_h(1 − α)/h)^{1/3}
 * and v = 2/(9h); by Wilson & Hilferty (1931) (χ²_h/h)^{1/3} ≈ N(1 − v, v), so
 *
 *   centre = (κ − 1)(1 − v)/√v,  spread = κ.
 *
 * When the limit is calibrated (the limit is the (1 − α) quantile of the ratio's own distribution)
 * κ = 1: centre 0, spread 1. When it is not (a limit from large-sample theory on a small golden set),
 * the drift chart still centres on the level the golden wafers showed out of sample — which is what
 * the drift rule's in-control run length depends on (an EWMA's ARL falls steeply with an offset).
 *
 * @param mean in-control mean ratio (> 0)
 * @param h shape
 * @param alpha the limit's α
 * @returns centre and spread in score units
 * @throws RangeError on a bad mean, h or α
 * @example driftLevel(3 / 11.3449, 3, 0.01) // → { centre: ≈ 0, spread: ≈ 1 } (χ²_3 at 0.99 is 11.3449)
 */
export function driftLevel(mean: number, h: number, alpha: number): { centre: number; spread: number } {
	if (!(mean > 0 && Number.isFinite(mean))) throw new RangeError(`the mean must be finite and > 0, got ${mean}`);
	const v = 2 / (9 * h);
	const kappa = Math.cbrt((mean * chiSquareUpper(alpha, h)) / h);
	return { centre: ((kappa - 1) * (1 - v)) / Math.sqrt(v), spread: kappa };
}

/**
 * In-control average run length of a one-sided (upper) EWMA chart on N(0, 1) data with steady-state
 * limit L·√(λ/(2 − λ)), by the Markov-chain approximation: the EWMA's range [−B, h] is cut into
 * `states` cells, transitions between cell centres come from the normal CDF, values below −B stay in
 * the lowest cell, and ARL = (I − P)⁻¹·1 from the cell that holds 0.
 * Source: Brook & Evans (1972) "An approach to the probability distribution of CUSUM run length",
 * Biometrika 59:539; used for the EWMA by Lucas & Saccucci (1990), Technometrics 32:1.
 *
 * @param lambda λ, 0 < λ ≤ 1
 * @param L limit width in σ_EWMA units (> 0)
 * @param states cells (default 161)
 * @param cap observations are min(Z, cap) (default: none; see {@link DRIFT_SCORE_CAP})
 * @returns the ARL in observations
 * @throws RangeError on a bad λ, L or cell count
 * @example ewmaUpperArl(1, 3) // → 1/P(Z > 3) ≈ 741 (a Shewhart chart), to about 1 %
 */
export function ewmaUpperArl(lambda: number, L: number, states = 161, cap = Infinity): number {
	if (!(lambda > 0 && lambda <= 1)) throw new RangeError(`λ must lie in (0, 1], got ${lambda}`);
	if (!(L > 0)) throw new RangeError(`L must be > 0, got ${L}`);
	if (!(Number.isInteger(states) && states >= 11)) throw new RangeError(`states must be an integer ≥ 11, got ${states}`);
	const s = Math.sqrt(lambda / (2 - lambda));
	const top = L * s;
	const bottom = -Math.max(4, L) * s; // the EWMA almost never sits below −4σ_EWMA
	const w = (top - bottom) / states;
	const c = Array.from({ length: states }, (_, i) => bottom + (i + 0.5) * w);
	// The observations are min(Z, cap): all the mass above the cap sits at the cap.
	const cdf = (x: number) => (x >= cap ? 1 : 1 - normalTail(x));
	// A = I − P, solved for A·ARL = 1 by Gaussian elimination with partial pivoting.
	const A = c.map((ci, i) =>
		c.map((cj, j) => {
			const hi = (cj + w / 2 - (1 - lambda) * ci) / lambda;
			const lo = (cj - w / 2 - (1 - lambda) * ci) / lambda;
			const p = j === 0 ? cdf(hi) : cdf(hi) - cdf(lo);
			return (i === j ? 1 : 0) - p;
		})
	);
	const b = new Array<number>(states).fill(1);
	for (let col = 0; col < states; col++) {
		let piv = col;
		for (let r = col + 1; r < states; r++) if (Math.abs(A[r][col]) > Math.abs(A[piv][col])) piv = r;
		[A[col], A[piv]] = [A[piv], A[col]];
		[b[col], b[piv]] = [b[piv], b[col]];
		for (let r = col + 1; r < states; r++) {
			const f = A[r][col] / A[col][col];
			if (f === 0) continue;
			for (let k = col; k < states; k++) A[r][k] -= f * A[col][k];
			b[r] -= f * b[col];
		}
	}
	const x = new Array<number>(states).fill(0);
	for (let r = states - 1; r >= 0; r--) {
		let sum = b[r];
		for (let k = r + 1; k < states; k++) sum -= A[r][k] * x[k];
		x[r] = sum / A[r][r];
	}
	const start = Math.min(states - 1, Math.max(0, Math.floor((0 - bottom) / w)));
	return x[start];
}

/**
 * Scores enter the drift chart capped at 3: one wafer far out is the gross rule's business, and a
 * heavy right tail (new-wafer T² follows an F, not a χ²; Q limits from a small golden set are often
 * too tight) would otherwise let single wafers trip the EWMA (one score of 6 moves it by 1.2 at
 * λ = 0.2, nearly its whole limit). The cap is in the ARL computation too. Bounding each observation's
 * influence is the idea of the robust CUSUM of Lucas & Crosier (1982, Technometrics 24:199) and of
 * the Huber-type EWMA; the value 3 is common practice (a Shewhart 3σ point).
 */
export const DRIFT_SCORE_CAP = 3;

const limitCache = new Map<string, number>();

/**
 * The limit width L of a one-sided EWMA on N(0, 1) data whose in-control ARL is `arl`, found by
 * bisection on {@link ewmaUpperArl} (the ARL grows monotonically with L). Cached per (λ, ARL, cap).
 *
 * @param lambda λ, 0 < λ ≤ 1
 * @param arl target in-control ARL (≥ 10)
 * @param cap observations capped at this score (default {@link DRIFT_SCORE_CAP}; Infinity: none)
 * @returns L to 1e-4
 * @throws RangeError on a bad λ or ARL
 * @example ewmaLimitForArl(0.2, 500, Infinity) // → ≈ 2.71 (two-sided charts need ≈ 2.86 for ARL 500,
 *   Lucas & Saccucci 1990 table 3; a one-sided chart signals half as often at the same L)
 */
export function ewmaLimitForArl(lambda: number, arl: number, cap = DRIFT_SCORE_CAP): number {
	if (!(arl >= 10 && Number.isFinite(arl))) throw new RangeError(`the target ARL must be ≥ 10, got ${arl}`);
	const key = `${lambda}:${arl}:${cap}`;
	const hit = limitCache.get(key);
	if (hit !== undefined) return hit;
	let lo = 0.5;
	let hi = 6;
	while (hi - lo > 1e-4) {
		const mid = (lo + hi) / 2;
		if (ewmaUpperArl(lambda, mid, 161, cap) < arl) lo = mid;
		else hi = mid;
	}
	const L = (lo + hi) / 2;
	limitCache.set(key, L);
	return L;
}

/** The autocorrelation a baseline kept for one ratio series (see EwmaReference in server/baselines.ts). */
export interface DriftReference {
	mean: number;
	sd: number;
	acf?: number[];
}

/**
 * The σ of the drift chart's scores: 1 (they are normal scores), widened to √F when the baseline kept
 * the ratio series' ACF. F is Zhang's (1998) EWMAST variance factor at λ, summed over the lags while
 * r_k stays positive, never below 1 ({@link ewmaInflation}, which says why). Wafers of one lot share
 * incoming film, and the chamber wanders between lots, so successive ratios are positively correlated
 * and the independent-data limits are too tight. The ACF is that of the ratios, not of their scores:
 * the score is a smooth monotone map of the ratio, whose lag correlations are close to the ratios'
 * (an approximation, checked by the ARL figures in tests/unit/monitoring/alarm-rules-arl.test.ts).
 * A reference without an ACF or `n` gives F = 1.
 *
 * @param ref the stored reference (acf optional)
 * @param n length of the series the ACF came from
 * @param lambda λ
 * @returns the σ and the factor with how it was reached (null without an ACF)
 * @example driftChartSd({ mean: 0.5, sd: 0.4, acf: [0.5] }, 100, 0.2).sd // → √1.8 ≈ 1.34
 */
export function driftChartSd(ref: DriftReference | undefined, n: number | undefined, lambda: number): { sd: number; inflation: EwmaInflation | null } {
	if (!ref?.acf || !n) return { sd: 1, inflation: null };
	const inflation = ewmaInflation(lambda, ref.acf, n);
	return { sd: Math.sqrt(inflation.factor), inflation };
}

/**
 * The drift chart of a series of normal scores: {@link ewma} of the scores capped at centre + cap·σ
 * ({@link DRIFT_SCORE_CAP}), with centre `centre` (default 0), σ `sd` and time-varying limits (Lucas &
 * Saccucci 1990); only the upper limit matters to the alarm rules.
 *
 * @param scores normal scores in time order
 * @param o λ, L and the scores' σ
 * @returns the chart
 * @example driftChart([0, 0, 3], { lambda: 0.2, L: 3, sd: 1 }).values[2] // → 0.6
 */
export function driftChart(scores: ArrayLike<number>, o: { lambda: number; L: number; sd: number; centre?: number; cap?: number }): EwmaChart {
	const centre = o.centre ?? 0;
	const cap = o.cap ?? DRIFT_SCORE_CAP;
	// The cap applies to the standardised score: centre + cap·σ in the chart's units.
	const top = centre + cap * o.sd;
	const capped = Float64Array.from(scores, (z) => Math.min(z, top));
	return ewma(capped, { lambda: o.lambda, L: o.L, mean: centre, sd: o.sd });
}

/** The normal quantile for an upper-tail probability (re-exported for the rules). */
export const upperNormal = normalUpper;
