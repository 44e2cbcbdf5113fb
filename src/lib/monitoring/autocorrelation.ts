/**
 * Sample autocorrelation function of a series and the standard error of each of its values.
 *
 * Formula: r_k = c_k / c_0 with c_k = (1/n) Σ_{t=1}^{n−k} (x_t − x̄)(x_{t+k} − x̄), k = 1…K.
 * The divisor n (not n − k) is the standard estimator: it keeps the estimated autocovariance
 * sequence positive semi-definite. Source: Box, Jenkins & Reinsel (2008) "Time Series Analysis:
 * Forecasting and Control", 4th ed., ch. 2 (estimation of the autocorrelation function; section
 * and equation numbers not given here because they are from memory).
 *
 * Useful estimates need n of roughly 50 or more and K no larger than about n/4 (Box, Jenkins &
 * Reinsel 2008, ch. 2; the figures from memory). The estimator is biased towards zero by about
 * −(1 + …)/n at every lag; no correction is made.
 *
 * @param series values in time order
 * @param maxLag K, an integer 1 ≤ K ≤ n − 1
 * @returns r_1 … r_K (index 0 holds r_1)
 * @throws RangeError on fewer than 3 values, a bad K, a non-finite value or a constant series
 * @example sampleAutocorrelation([1, 2, 3, 4, 5], 2) // → [0.4, −0.1]
 */
export function sampleAutocorrelation(series: ArrayLike<number>, maxLag: number): Float64Array {
	const n = series.length;
	if (n < 3) throw new RangeError(`the autocorrelation needs at least 3 values, got ${n}`);
	if (!(Number.isInteger(maxLag) && maxLag >= 1 && maxLag <= n - 1))
		throw new RangeError(`maxLag must be an integer in [1, ${n - 1}], got ${maxLag}`);
	let mean = 0;
	for (let t = 0; t < n; t++) {
		if (!Number.isFinite(series[t])) throw new RangeError(`value ${t} is not finite`);
		mean += series[t];
	}
	mean /= n;
	const d = new Float64Array(n);
	let c0 = 0;
	for (let t = 0; t < n; t++) {
		d[t] = series[t] - mean;
		c0 += d[t] * d[t];
	}
	if (!(c0 > 0)) throw new RangeError('the series is constant: its autocorrelation is undefined');
	const r = new Float64Array(maxLag);
	for (let k = 1; k <= maxLag; k++) {
		let ck = 0;
		for (let t = 0; t + k < n; t++) ck += d[t] * d[t + k];
		r[k - 1] = ck / c0;
	}
	return r;
}

/**
 * Large-lag standard error of each sample autocorrelation, under the hypothesis that the true ρ(j)
 * is zero beyond lag k − 1: se(r_k) = √((1 + 2 Σ_{j=1}^{k−1} r_j²) / n). For k = 1 this is 1/√n,
 * the white-noise band. Source: Bartlett (1946) "On the theoretical specification and sampling
 * properties of autocorrelated time-series", JRSS Suppl. 8:27; as used in Box, Jenkins & Reinsel
 * (2008) ch. 2 (standard errors of autocorrelation estimates).
 *
 * @param acf r_1 … r_K
 * @param n length of the series the ACF was estimated from (≥ 1)
 * @returns se(r_1) … se(r_K)
 * @throws RangeError on a bad n or a non-finite r
 * @example bartlettStandardErrors([0.5, 0.25], 100) // → [0.1, √1.5 / 10 ≈ 0.1225]
 */
export function bartlettStandardErrors(acf: ArrayLike<number>, n: number): Float64Array {
	if (!(Number.isInteger(n) && n >= 1)) throw new RangeError(`n must be a positive integer, got ${n}`);
	const se = new Float64Array(acf.length);
	let sum = 0;
	for (let k = 0; k < acf.length; k++) {
		if (!Number.isFinite(acf[k])) throw new RangeError(`r_${k + 1} is not finite`);
		se[k] = Math.sqrt((1 + 2 * sum) / n);
		sum += acf[k] * acf[k];
	}
	return se;
}
