import erfc from '@stdlib/math-base-special-erfc';
import { normalUpper } from './quantiles';
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
 * Ann. Math. Statist. 25:290, the approximation behind the Q limit of Jackson & Mudholkar 1979;
 * citations from memory).
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

/** In-control moments of a ratio series: mean, sd, skewness (third standardised moment) and how many values. */
export interface RatioMoments {
	mean: number;
	sd: number;
	skew: number;
	n: number;
}

/** A shifted, scaled χ²: X ≈ a + g·χ²_h. */
export interface ShiftedChiSquare {
	a: number;
	g: number;
	h: number;
}

/**
 * Moments (mean, sd, skewness) of a series; NaN values are skipped.
 * @throws RangeError on fewer than 3 values or a zero spread
 * @example ratioMoments([1, 2, 3, 10]).skew // → ≈ 1.05 (population third moment over sd³ with the n − 1 sd)
 */
export function ratioMoments(xs: ArrayLike<number>): RatioMoments {
	let n = 0;
	let sum = 0;
	for (let i = 0; i < xs.length; i++) if (!Number.isNaN(xs[i])) (n++, (sum += xs[i]));
	if (n < 3) throw new RangeError(`moments need at least 3 values, got ${n}`);
	const mean = sum / n;
	let m2 = 0;
	let m3 = 0;
	for (let i = 0; i < xs.length; i++) {
		if (Number.isNaN(xs[i])) continue;
		const d = xs[i] - mean;
		m2 += d * d;
		m3 += d * d * d;
	}
	const sd = Math.sqrt(m2 / (n - 1));
	if (!(sd > 0)) throw new RangeError('the series does not vary');
	return { mean, sd, skew: m3 / n / sd ** 3, n };
}

/**
 * Three-moment fit of a shifted, scaled χ² to a ratio's in-control mean, sd and skewness:
 * h = 8/skew², g = sd/√(2h), a = mean − g·h (a + g·χ²_h has exactly these three moments). The
 * three-moment χ² approximation of quadratic forms is Pearson's (1959, "Note on an approximation to
 * the distribution of non-central χ²", Biometrika 46:364), used by Imhof (1961, Biometrika 48:419;
 * both citations from memory) for Q-like statistics. Why three moments: the out-of-sample Q of a new wafer is more skewed than a
 * χ² with its mean and sd (the plane's estimation error scales with the wafer's scores), so a
 * two-moment fit puts far too little probability in the tail — measured with p = 40 and 100 golden wafers, 6e-4
 * against 3.2e-5 for a normal beyond a score of 4, and 9e-5 with three moments (bench/ratio-tails.ts).
 * With fewer than 200 values the skewness is too noisy (its sd ≈ √(6/n)) and the two-moment fit
 * (a = 0, h = 2·mean²/sd², Box 1954) is used. h is clipped to [1, 200].
 *
 * @param m moments of the in-control series (mean > 0, sd > 0)
 * @returns a, g, h
 * @throws RangeError on a non-positive mean or sd
 * @example shiftedChiSquare({ mean: 3, sd: Math.sqrt(6), skew: Math.sqrt(8 / 3), n: 500 }) // → { a: ≈ 0, g: ≈ 1, h: ≈ 3 }
 */
export function shiftedChiSquare(m: RatioMoments): ShiftedChiSquare {
	if (!(m.mean > 0 && Number.isFinite(m.mean))) throw new RangeError(`the mean must be finite and > 0, got ${m.mean}`);
	if (!(m.sd > 0 && Number.isFinite(m.sd))) throw new RangeError(`the sd must be finite and > 0, got ${m.sd}`);
	if (m.n < 200 || !(m.skew > 0)) {
		const h = ratioShape(m.mean, m.sd);
		return { a: 0, g: m.mean / h, h };
	}
	const h = Math.min(200, Math.max(1, 8 / (m.skew * m.skew)));
	const g = m.sd / Math.sqrt(2 * h);
	return { a: m.mean - g * h, g, h };
}

/**
 * Normal score of a ratio under its fitted shifted χ², by the Wilson–Hilferty cube root:
 * z = [ (((r − a)/g)/h)^{1/3} − (1 − 2/(9h)) ] / √(2/(9h)) (Wilson & Hilferty 1931, "The distribution of chi-square", PNAS 17:684; from memory); ≈ N(0, 1) in
 * control. Ratios below a score as a ratio at a. `ratio(z)` is the inverse: the ratio whose score is z.
 *
 * @example scoreScale({ a: 0, g: 1, h: 3 }).score(3 * 0.9259) // → ≈ 0 (the cube root's centre)
 */
export function scoreScale(f: ShiftedChiSquare): { score: (ratio: number) => number; ratio: (z: number) => number } {
	const v = 2 / (9 * f.h);
	const sv = Math.sqrt(v);
	return {
		score: (r) => (Math.cbrt(Math.max(0, (r - f.a) / f.g) / f.h) - (1 - v)) / sv,
		ratio: (z) => f.a + f.g * f.h * Math.max(0, 1 - v + z * sv) ** 3
	};
}

/**
 * In-control average run length of a one-sided (upper) EWMA chart on N(0, 1) data with steady-state
 * limit L·√(λ/(2 − λ)), by the Markov-chain approximation: the EWMA's range [−B, h] is cut into
 * `states` cells, transitions between cell centres come from the normal CDF, values below −B stay in
 * the lowest cell, and ARL = (I − P)⁻¹·1 from the cell that holds 0.
 * Source: Brook & Evans (1972) "An approach to the probability distribution of CUSUM run length",
 * Biometrika 59:539; used for the EWMA by Lucas & Saccucci (1990), Technometrics 32:1 (citations from
 * memory).
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
 * influence is the idea of the robust CUSUM of Lucas & Crosier (1982, Technometrics 24:199; from
 * memory) and of the Huber-type EWMA; the value 3 is common practice (a Shewhart 3σ point).
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
