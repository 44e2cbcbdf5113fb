import { bartlettStandardErrors, sampleAutocorrelation } from './autocorrelation';

/** Zhang's truncation horizon M: the sum runs to lag M, and Zhang (1998) asks for M ≥ 25. */
export const EWMAST_M = 25;

/**
 * Variance inflation factor of an EWMA over a stationary autocorrelated series (Zhang's EWMAST
 * chart): Var(Z) ≈ σ² · λ/(2 − λ) · F with
 *
 *   F = 1 + 2 Σ_{k=1}^{M} ρ(k) (1 − λ)^k (1 − (1 − λ)^{2(M−k)}),
 *
 * so the chart's limits use σ√F in place of σ. Source: Zhang (1998) "A statistical control chart
 * for stationary process data", Technometrics 40(1):24–38 (eq. for Var(Z_t), M ≥ 25 recommended).
 *
 * Derivation (checked here): Z_t = λ Σ_{i=0}^{t−1} (1 − λ)^i x_{t−i} + (1 − λ)^t μ, so
 * Var(Z_t) = λ² σ² Σ_i Σ_j (1 − λ)^{i+j} ρ(|i − j|). The diagonal gives
 * λ² σ² (1 − (1 − λ)^{2t}) / (1 − (1 − λ)²); each lag k ≥ 1 appears twice, in the pairs
 * (i, i + k), i = 0…t − 1 − k, giving 2 λ² σ² ρ(k) (1 − λ)^k (1 − (1 − λ)^{2(t−k)}) / (1 − (1 − λ)²).
 * With 1 − (1 − λ)² = λ(2 − λ) this is σ² λ/(2 − λ) [1 − (1 − λ)^{2t} + 2 Σ_{k=1}^{t−1} ρ(k)
 * (1 − λ)^k (1 − (1 − λ)^{2(t−k)})]: Zhang's F is the bracket at t = M with the vanishing
 * (1 − λ)^{2M} dropped. For AR(1), ρ(k) = φ^k, and M → ∞ the sum is geometric in a = φ(1 − λ):
 * F → 1 + 2a/(1 − a) = (1 + φ(1 − λ)) / (1 − φ(1 − λ)).
 *
 * Lags beyond `rho.length` count as ρ(k) = 0; lags beyond M are ignored.
 *
 * @param lambda smoothing weight λ, 0 < λ ≤ 1
 * @param rho ρ(1), ρ(2), … (index 0 holds lag 1)
 * @param M truncation horizon (integer ≥ 1, default {@link EWMAST_M})
 * @returns F (1 for independent data; may fall below 1 for negative ρ)
 * @throws RangeError on a bad λ or M, or a non-finite ρ
 * @example ewmastVarianceFactor(0.2, [0.5]) // → 1 + 2·0.5·0.8·(1 − 0.8^48) ≈ 1.8
 */
export function ewmastVarianceFactor(lambda: number, rho: ArrayLike<number>, M = EWMAST_M): number {
	if (!(lambda > 0 && lambda <= 1)) throw new RangeError(`λ must lie in (0, 1], got ${lambda}`);
	if (!(Number.isInteger(M) && M >= 1)) throw new RangeError(`M must be a positive integer, got ${M}`);
	const w = 1 - lambda;
	let sum = 0;
	const K = Math.min(M, rho.length);
	for (let k = 1; k <= K; k++) {
		const r = rho[k - 1];
		if (!Number.isFinite(r)) throw new RangeError(`ρ(${k}) is not finite`);
		sum += r * w ** k * (1 - w ** (2 * (M - k)));
	}
	return 1 + 2 * sum;
}

/** Options of {@link ewmaInflation}. */
export interface EwmaInflationOptions {
	/** Zhang's horizon M (default 25). */
	M?: number;
	/**
	 * Where the sum over lags stops: `'first-non-positive'` (default) at the first r_k ≤ 0;
	 * `'first-insignificant'` at the first r_k inside its Bartlett band |r_k| ≤ z · se(r_k).
	 */
	cutoff?: 'first-non-positive' | 'first-insignificant';
	/** Normal quantile of the significance band for `'first-insignificant'` (default 1.96, i.e. 95 %). */
	z?: number;
	/** Shortest series whose ACF is trusted at all (default 20). */
	minLength?: number;
}

/** The factor to apply, and how it was reached. */
export interface EwmaInflation {
	/** F ≥ 1: multiply the in-control variance by it (the sd by √F). */
	factor: number;
	/** Zhang's F over the lags used, before the clip at 1. */
	unclipped: number;
	/** Lags used: 1 … lagsUsed (0 when none qualified or the series was too short). */
	lagsUsed: number;
	reason: 'autocorrelated' | 'no-lag-used' | 'negative' | 'short-series';
}

/**
 * EWMA variance inflation from an estimated ACF, with the guards a sample ACF needs.
 *
 * Rule: F = max(1, Zhang's F over lags 1 … K − 1), where K is the cutoff lag (below), at most M and
 * the number of lags given; a series shorter than `minLength` gives F = 1.
 * - Why truncate at all: Zhang's sum weighs every lag by (1 − λ)^k, and with n of 40–100 golden
 *   wafers each r_k carries noise of about 1/√n, so summing all 25 lags moves F by about ±0.3 at
 *   λ = 0.2 by chance alone.
 * - Default cutoff, the first r_k ≤ 0: the idea of Geyer's (1992) initial positive sequence
 *   estimator for the variance of a mean of correlated draws ("Practical Markov chain Monte Carlo",
 *   Statistical Science 7:473) — sum the autocorrelations while they stay positive; Geyer sums
 *   adjacent pairs, this rule single lags (common practice). The alternative, the first lag the
 *   data cannot tell from zero (Bartlett band; the usual identification of a finite-order
 *   correlation, Box, Jenkins & Reinsel 2008, ch. 6 — chapter from memory), drops the tail of a
 *   slowly decaying ACF while it is still positive, and so understates F. Measured here with 80
 *   golden values, λ = 0.2, L = 3 (tests/unit/monitoring/ewma-autocorrelation-mc.test.ts prints the
 *   figures): on AR(1) data with φ = 0.5 and 0.8 the share of wafers above the limit is 0.28 % and
 *   0.42 % with the default, 0.48 % and 0.68 % with the Bartlett cutoff, 2.5 % and 8.1 % with no
 *   inflation, against 0.145 % for the independent-data chart on independent data (the true ρ(k)
 *   gives 0.14 %); on independent data the default widens the limits slightly (mean √F ≈ 1.06),
 *   a small loss of sensitivity.
 * - Clip at 1: a negative or noisy ACF would make the chart tighter than the independent-data chart,
 *   which one short golden set cannot justify (common practice); the chart is never tighter than
 *   the classic EWMA.
 *
 * Sources: Zhang (1998) Technometrics 40(1):24–38 (the factor); Geyer (1992) (the default cutoff);
 * Bartlett (1946) for se(r_k).
 *
 * @param lambda smoothing weight λ, 0 < λ ≤ 1
 * @param acf r_1 … r_K of the in-control series (e.g. from sampleAutocorrelation)
 * @param n length of the series the ACF came from
 * @param options M, cutoff, z, minLength
 * @returns the factor and how it was reached
 * @throws RangeError as {@link ewmastVarianceFactor}, or on a bad z
 * @example ewmaInflation(0.2, [0.5, -0.1, 0.4], 100).factor // → 1 + 2·0.5·0.8·(1 − 0.8^48) ≈ 1.8
 */
export function ewmaInflation(
	lambda: number,
	acf: ArrayLike<number>,
	n: number,
	options: EwmaInflationOptions = {}
): EwmaInflation {
	const M = options.M ?? EWMAST_M;
	const z = options.z ?? 1.96;
	const minLength = options.minLength ?? 20;
	const cutoff = options.cutoff ?? 'first-non-positive';
	if (!(z > 0)) throw new RangeError(`z must be > 0, got ${z}`);
	if (n < minLength) return { factor: 1, unclipped: 1, lagsUsed: 0, reason: 'short-series' };
	const last = Math.min(M, acf.length);
	let used = 0;
	if (cutoff === 'first-non-positive') {
		while (used < last && acf[used] > 0) used++;
	} else {
		const se = bartlettStandardErrors(acf, n);
		while (used < last && Math.abs(acf[used]) > z * se[used]) used++;
	}
	if (used === 0) return { factor: 1, unclipped: 1, lagsUsed: 0, reason: 'no-lag-used' };
	const unclipped = ewmastVarianceFactor(lambda, Array.prototype.slice.call(acf, 0, used), M);
	if (unclipped < 1) return { factor: 1, unclipped, lagsUsed: used, reason: 'negative' };
	return { factor: unclipped, unclipped, lagsUsed: used, reason: 'autocorrelated' };
}

/** A sample ACF with the number of observed values it came from. */
export interface GappedAutocorrelation {
	/** r_1 … r_K (index 0 holds r_1) */
	acf: Float64Array;
	/** values that were observed (not NaN): the n to judge the ACF by */
	observed: number;
}

/**
 * Sample ACF of a series in time order in which some positions are missing (NaN), each value kept at
 * its own position so that lag k still means "k wafers apart":
 *
 *   r_k = Σ_{t: x_t and x_{t+k} observed} d_t d_{t+k} / Σ_{t observed} d_t²,  d_t = x_t − x̄_observed.
 *
 * With nothing missing this is the Box–Jenkins estimator of {@link sampleAutocorrelation}. Missing
 * positions take the observed mean, whose deviation is 0, so they add nothing to either sum: the
 * function is sampleAutocorrelation of the mean-filled series (derivation; the same treatment of
 * gaps as an amplitude-modulated series, Parzen 1963, "On spectral analysis with missing
 * observations and amplitude modulation", Sankhyā A 25 — reference from memory). It is what the
 * EWMA limits need when a few wafers of a run are left out (seasoning, an alarm): the EWMA runs
 * over consecutive wafers, so its variance depends on ρ at consecutive-wafer lags (Zhang 1998), and
 * closing the gaps would shift the lags of every pair across one.
 *
 * @param series values in time order, NaN where a value is missing (±∞ is refused)
 * @param maxLag K, an integer 1 ≤ K ≤ series.length − 1
 * @returns r_1 … r_K and the number of observed values
 * @throws RangeError on fewer than 3 observed values, a bad K, ±∞ or a constant observed series
 * @example gappedAutocorrelation([1, NaN, 3, 4, 5], 1).acf // → [(−0.25·0.75 + 0.75·1.75) / 8.75 ≈ 0.129]
 */
export function gappedAutocorrelation(series: ArrayLike<number>, maxLag: number): GappedAutocorrelation {
	let sum = 0;
	let observed = 0;
	for (let t = 0; t < series.length; t++) {
		const v = series[t];
		if (Number.isNaN(v)) continue;
		if (!Number.isFinite(v)) throw new RangeError(`value ${t} is not finite`);
		sum += v;
		observed++;
	}
	if (observed < 3) throw new RangeError(`the autocorrelation needs at least 3 observed values, got ${observed}`);
	const mean = sum / observed;
	const filled = Float64Array.from({ length: series.length }, (_, t) => (Number.isNaN(series[t]) ? mean : series[t]));
	return { acf: sampleAutocorrelation(filled, maxLag), observed };
}
