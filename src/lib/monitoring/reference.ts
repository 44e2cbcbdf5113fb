/** In-control centre and spread of a series. */
export interface InControl {
	mean: number;
	sd: number;
}

/**
 * Centre and spread of a series from its first `count` values (the in-control reference segment,
 * e.g. the wafers scored right after the baseline was approved).
 *
 * Formula: mean = Σ x_i / m; sd = √(Σ (x_i − mean)² / (m − 1)), i = 1…m.
 * Source: Montgomery (2009) "Introduction to Statistical Quality Control", 6th ed., §6.4 (phase I
 * estimates for individuals).
 *
 * @param series the values
 * @param count reference length m (≥ 2, ≤ series length)
 * @returns mean and sd
 * @throws RangeError on a too-short series, a non-finite value or a zero spread
 * @example referenceStats([1, 2, 3, 10], 3) // → { mean: 2, sd: 1 }
 */
export function referenceStats(series: ArrayLike<number>, count: number): InControl {
	if (!(Number.isInteger(count) && count >= 2 && count <= series.length))
		throw new RangeError(`reference segment needs 2 ≤ count ≤ ${series.length}, got ${count}`);
	let mean = 0;
	for (let i = 0; i < count; i++) {
		if (!Number.isFinite(series[i])) throw new RangeError(`value ${i} is not finite`);
		mean += series[i] / count;
	}
	let ss = 0;
	for (let i = 0; i < count; i++) ss += (series[i] - mean) ** 2;
	const sd = Math.sqrt(ss / (count - 1));
	if (!(sd > 0)) throw new RangeError('the reference segment has zero spread: give mean and sd explicitly');
	return { mean, sd };
}

/**
 * In-control mean and sd for a chart: explicit values win; otherwise estimated from the first
 * `referenceLength` values (default `defaultLength`) with {@link referenceStats}.
 *
 * Source: Montgomery (2009) §6.4 (phase I / phase II).
 *
 * @param series the values
 * @param opts explicit mean/sd, or a reference length
 * @param defaultLength reference length when none is given
 * @returns mean and sd
 * @throws RangeError on a non-finite mean, sd ≤ 0, or as {@link referenceStats}
 * @example resolveInControl([1, 2, 3], { mean: 0, sd: 1 }, 20) // → { mean: 0, sd: 1 }
 */
export function resolveInControl(
	series: ArrayLike<number>,
	opts: { mean?: number; sd?: number; referenceLength?: number },
	defaultLength: number
): InControl {
	if (opts.mean !== undefined && opts.sd !== undefined) {
		if (!Number.isFinite(opts.mean) || !(opts.sd > 0)) throw new RangeError('mean must be finite and sd > 0');
		return { mean: opts.mean, sd: opts.sd };
	}
	const est = referenceStats(series, opts.referenceLength ?? Math.min(defaultLength, series.length));
	return { mean: opts.mean ?? est.mean, sd: opts.sd ?? est.sd };
}
