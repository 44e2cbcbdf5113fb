import { resolveInControl } from './reference';

/** Options of {@link ewma}. */
export interface EwmaOptions {
	/** Smoothing weight λ, 0 < λ ≤ 1 (default 0.2). */
	lambda?: number;
	/** Limit width L in σ units (default 3). */
	L?: number;
	/** In-control mean μ0; with `sd`, overrides the reference segment. */
	mean?: number;
	/** In-control standard deviation σ of the individual values. */
	sd?: number;
	/** Reference segment length when mean/sd are not given (default 20). */
	referenceLength?: number;
}

/** An EWMA chart of a series. */
export interface EwmaChart {
	/** z_i, one per input value. */
	values: Float64Array;
	/** Time-varying upper and lower limits, one per value. */
	upper: Float64Array;
	lower: Float64Array;
	/** The limits' steady-state values μ0 ± Lσ√(λ/(2 − λ)). */
	upperAsymptote: number;
	lowerAsymptote: number;
	mean: number;
	sd: number;
	lambda: number;
	L: number;
	/** Indices where z_i is outside its limits. */
	signals: number[];
}

/**
 * Exponentially weighted moving average chart with time-varying limits.
 *
 * Formula: z_0 = μ0, z_i = λ x_i + (1 − λ) z_{i−1}; limits μ0 ± L σ √( λ/(2 − λ) · [1 − (1 − λ)^{2i}] ).
 * Source: Roberts (1959) "Control chart tests based on geometric moving averages", Technometrics
 * 1:239; the exact (time-varying) variance factor as in Lucas & Saccucci (1990) "Exponentially
 * weighted moving average control schemes: properties and enhancements", Technometrics 32:1.
 * Defaults λ = 0.2, L = 3: common practice (Montgomery 2009, §9.2).
 *
 * @param series values in time order (e.g. a chamber's T²/limit ratios)
 * @param options see {@link EwmaOptions}
 * @returns the chart
 * @throws RangeError on a bad λ or L, a non-finite value, or too short a reference segment
 * @example ewma([1, 1, 1, 2], { mean: 1, sd: 0.1 }).values[3] // → 1.2
 */
export function ewma(series: ArrayLike<number>, options: EwmaOptions = {}): EwmaChart {
	const lambda = options.lambda ?? 0.2;
	const L = options.L ?? 3;
	if (!(lambda > 0 && lambda <= 1)) throw new RangeError(`λ must lie in (0, 1], got ${lambda}`);
	if (!(L > 0)) throw new RangeError(`L must be > 0, got ${L}`);
	const { mean, sd } = resolveInControl(series, options, 20);
	const n = series.length;
	const values = new Float64Array(n);
	const upper = new Float64Array(n);
	const lower = new Float64Array(n);
	const signals: number[] = [];
	const base = lambda / (2 - lambda);
	let z = mean;
	let decay = 1;
	for (let i = 0; i < n; i++) {
		const x = series[i];
		if (!Number.isFinite(x)) throw new RangeError(`value ${i} is not finite`);
		z = lambda * x + (1 - lambda) * z;
		decay *= (1 - lambda) * (1 - lambda);
		const w = L * sd * Math.sqrt(base * (1 - decay));
		values[i] = z;
		upper[i] = mean + w;
		lower[i] = mean - w;
		if (z > upper[i] || z < lower[i]) signals.push(i);
	}
	const wInf = L * sd * Math.sqrt(base);
	return { values, upper, lower, upperAsymptote: mean + wInf, lowerAsymptote: mean - wInf, mean, sd, lambda, L, signals };
}
