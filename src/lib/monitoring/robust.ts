/** Median of a list (the mean of the two middle values for an even count); not exported. */
function median(values: ArrayLike<number>): number {
	const s = Float64Array.from(values).sort();
	const m = s.length >> 1;
	return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2;
}

/** Modified z-scores of a list, with the centre and spread used. */
export interface ModifiedZ {
	scores: Float64Array;
	median: number;
	/** Median absolute deviation from the median. */
	mad: number;
	/** Which spread was used: the MAD, or the mean absolute deviation when the MAD is 0. */
	spread: 'mad' | 'meanad';
}

/** The outlier threshold recommended by Iglewicz & Hoaglin (1993): |M| > 3.5. */
export const MODIFIED_Z_THRESHOLD = 3.5;

/**
 * Modified z-scores, a robust outlier measure.
 *
 * Formula: M_i = 0.6745 (x_i − median) / MAD, MAD = median |x_i − median|; flag |M_i| > 3.5.
 * When the MAD is 0 (more than half the values tie), M_i = (x_i − median) / (1.253314 · MeanAD),
 * MeanAD the mean absolute deviation from the median (common practice; 1.253314 = √(π/2) makes
 * MeanAD consistent for a normal σ); when that is 0 too, all values are equal and every M_i = 0.
 * Source: Iglewicz & Hoaglin (1993) "How to Detect and Handle Outliers", ASQC Basic References in
 * Quality Control vol. 16, §3.
 *
 * @param values at least 3 finite numbers
 * @returns the scores, the median and the MAD
 * @throws RangeError on fewer than 3 values or a non-finite value
 * @example modifiedZScores([1, 2, 3, 4, 100]).scores[4] // → 65.4265 (0.6745 · 97 / 1)
 */
export function modifiedZScores(values: ArrayLike<number>): ModifiedZ {
	if (values.length < 3) throw new RangeError(`modified z-scores need at least 3 values, got ${values.length}`);
	for (let i = 0; i < values.length; i++)
		if (!Number.isFinite(values[i])) throw new RangeError(`value ${i} is not finite`);
	const med = median(values);
	const dev = Float64Array.from(values, (v) => Math.abs(v - med));
	const mad = median(dev);
	const scores = new Float64Array(values.length);
	if (mad > 0) {
		for (let i = 0; i < values.length; i++) scores[i] = (0.6745 * (values[i] - med)) / mad;
		return { scores, median: med, mad, spread: 'mad' };
	}
	let meanAd = 0;
	for (const d of dev) meanAd += d / dev.length;
	if (meanAd > 0) for (let i = 0; i < values.length; i++) scores[i] = (values[i] - med) / (1.253314 * meanAd);
	return { scores, median: med, mad, spread: 'meanad' };
}
