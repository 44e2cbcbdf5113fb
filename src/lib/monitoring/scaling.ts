import { MonitoringInputError } from './errors';

/** How golden-set columns are scaled before PCA. */
export type ScalingMethod = 'autoscale' | 'pareto' | 'none';

/** A row of feature values, in the model's feature order. */
export type Row = ArrayLike<number>;

/**
 * The floor below which a golden standard deviation counts as (near) zero:
 * floor_j = max(relative · |mean_j|, absolute, Δ_j when `resolution`), in the feature's own units,
 * Δ_j the feature's resolution ({@link featureResolution}).
 */
export interface ScaleFloor {
	relative: number;
	absolute: number;
	/**
	 * Floor at the feature's resolution too, so that one quantisation step of a channel that never
	 * moved in the golden set counts as one standard deviation, not 10⁴–10⁸ of them. Absent (false) on
	 * models stored before it.
	 */
	resolution?: boolean;
}

/** Defaults: 1e-6 of the level, 1e-9 absolute, and the feature's resolution. */
export const DEFAULT_SCALE_FLOOR: ScaleFloor = { relative: 1e-6, absolute: 1e-9, resolution: true };

/**
 * The resolution of a feature seen in its golden values: the smallest non-zero difference between
 * two of them (the quantisation step, or a multiple of it), or, when all values are equal, the step
 * of the last decimal digit the value is written with (400 → 1, 12.25 → 0.01, 1.5e-7 → 1e-8).
 *
 * Formula: Δ = min_{x_i ≠ x_l} |x_i − x_l|; constant column: Δ = 10^−d, d the decimals of the
 * shortest round-trip decimal form (ECMA-262 Number::toString). Source: quantisation step as the
 * resolution of a reading, Widrow & Kollár (2008) "Quantization Noise", ch. 1 (common practice).
 *
 * @param values the golden values of one feature (finite)
 * @returns Δ > 0
 * @throws nothing
 * @example featureResolution([400, 401, 400, 403]) // → 1
 */
export function featureResolution(values: ArrayLike<number>): number {
	const sorted = Float64Array.from(values).sort();
	let step = Infinity;
	for (let i = 1; i < sorted.length; i++) {
		const d = sorted[i] - sorted[i - 1];
		if (d > 0 && d < step) step = d;
	}
	if (Number.isFinite(step)) return step;
	const text = String(Math.abs(sorted[0] ?? 0));
	const [mantissa, exp] = text.split('e');
	const decimals = (mantissa.split('.')[1] ?? '').length - Number(exp ?? 0);
	return Math.pow(10, -decimals);
}

/** A feature whose golden-set standard deviation was at or below its floor, and what was done. */
export interface LowVarianceFeature {
	feature: string;
	index: number;
	/** Golden-set standard deviation (n − 1), possibly 0. */
	sd: number;
	/** The standard deviation used instead. */
	floor: number;
	/** The feature's resolution Δ ({@link featureResolution}); absent on models stored before it. */
	resolution?: number;
	treatment: 'scale-floored';
}

/** Column statistics of a golden set and the scale each column is divided by. */
export interface Scaling {
	method: ScalingMethod;
	mean: Float64Array;
	/** Golden-set sample standard deviation (n − 1). */
	sd: Float64Array;
	/** Divisor of each centred column: sd (autoscale), √sd (Pareto) or 1 (none), after the floor. */
	scale: Float64Array;
	floor: ScaleFloor;
	lowVariance: LowVarianceFeature[];
}

/**
 * Refuse a row with a missing or non-finite value; the engine never imputes.
 *
 * Formula: none (a check). Source: common practice — PCA monitoring needs complete rows; missing-data
 * methods exist (e.g. Nelson, Taylor & MacGregor 1996) but Lockstep deliberately does not impute.
 *
 * @param x the row
 * @param featureNames names of the features, in order
 * @param rowIndex index of the row in its batch, for the message
 * @returns nothing
 * @throws MonitoringInputError naming the feature (and row) when a value is missing, NaN or ±∞, or
 *   when the row has the wrong length
 * @example assertFiniteRow([1, NaN], ['a', 'b']) // throws: feature "b" is NaN
 */
export function assertFiniteRow(x: Row, featureNames: readonly string[], rowIndex?: number): void {
	const where = rowIndex === undefined ? '' : ` in row ${rowIndex}`;
	if (x == null || typeof x.length !== 'number')
		throw new MonitoringInputError(`row${where} is not an array of numbers`, { row: rowIndex });
	if (x.length !== featureNames.length)
		throw new MonitoringInputError(
			`row${where} has ${x.length} values, expected ${featureNames.length} (one per feature)`,
			{ row: rowIndex }
		);
	for (let j = 0; j < x.length; j++) {
		const v = x[j];
		if (typeof v !== 'number' || !Number.isFinite(v)) {
			const what = v === undefined || v === null ? 'missing' : String(v);
			throw new MonitoringInputError(
				`feature "${featureNames[j]}"${where} is ${what}: a wafer with a missing or non-finite value is refused, not imputed`,
				{ feature: featureNames[j], row: rowIndex }
			);
		}
	}
}

/**
 * Column means, standard deviations and scales of a golden set.
 *
 * Formula: mean_j = Σ_i x_ij / n; sd_j = √(Σ_i (x_ij − mean_j)² / (n − 1)) (two-pass, for accuracy);
 * autoscale: s_j = max(sd_j, floor_j); Pareto: s_j = √max(sd_j, floor_j); none: s_j = 1. A feature
 * with sd_j ≤ floor_j is flagged (see {@link ScaleFloor}; the floor includes the feature's resolution
 * unless `floor.resolution` is false).
 * Source: centring and unit-variance scaling, Jackson (1991) "A User's Guide to Principal
 * Components", §3.3; Pareto scaling, van den Berg et al. (2006) BMC Genomics 7:142.
 *
 * @param rows golden rows (n ≥ 2), each validated with {@link assertFiniteRow}
 * @param featureNames feature names, one per column
 * @param method scaling method
 * @param floor near-zero-variance floor
 * @returns the scaling
 * @throws MonitoringInputError on fewer than 2 rows or a bad row
 * @example fitScaling([[1, 5], [3, 5]], ['a', 'b'], 'autoscale').lowVariance[0].feature // → 'b'
 */
export function fitScaling(
	rows: readonly Row[],
	featureNames: readonly string[],
	method: ScalingMethod = 'autoscale',
	floor: ScaleFloor = DEFAULT_SCALE_FLOOR
): Scaling {
	const n = rows.length;
	const p = featureNames.length;
	if (n < 2) throw new MonitoringInputError(`a baseline needs at least 2 golden rows, got ${n}`);
	if (!(floor.relative >= 0 && floor.absolute > 0))
		throw new RangeError('scale floor: relative must be ≥ 0 and absolute > 0');
	const mean = new Float64Array(p);
	for (let i = 0; i < n; i++) {
		const x = rows[i];
		assertFiniteRow(x, featureNames, i);
		for (let j = 0; j < p; j++) mean[j] += x[j];
	}
	for (let j = 0; j < p; j++) mean[j] /= n;
	const ss = new Float64Array(p);
	for (let i = 0; i < n; i++) {
		const x = rows[i];
		for (let j = 0; j < p; j++) {
			const d = x[j] - mean[j];
			ss[j] += d * d;
		}
	}
	const sd = new Float64Array(p);
	const scale = new Float64Array(p);
	const lowVariance: LowVarianceFeature[] = [];
	const column = new Float64Array(n);
	for (let j = 0; j < p; j++) {
		sd[j] = Math.sqrt(ss[j] / (n - 1));
		let f = Math.max(floor.relative * Math.abs(mean[j]), floor.absolute);
		let resolution: number | undefined;
		if (floor.resolution) {
			for (let i = 0; i < n; i++) column[i] = rows[i][j];
			resolution = featureResolution(column);
			f = Math.max(f, resolution);
		}
		let s = sd[j];
		if (!(sd[j] > f)) {
			s = f;
			lowVariance.push({ feature: featureNames[j], index: j, sd: sd[j], floor: f, treatment: 'scale-floored', ...(resolution === undefined ? {} : { resolution }) });
		}
		scale[j] = method === 'autoscale' ? s : method === 'pareto' ? Math.sqrt(s) : 1;
	}
	return { method, mean, sd, scale, floor: { ...floor }, lowVariance };
}

/**
 * Centre and scale one row: z_j = (x_j − mean_j) / s_j.
 *
 * Source: Jackson (1991) "A User's Guide to Principal Components", §3.3.
 *
 * @param mean column means
 * @param scale column scales
 * @param x the row
 * @param out destination (length p); allocated when omitted
 * @returns the scaled row
 * @throws nothing (the row is not validated here; callers validate with {@link assertFiniteRow})
 * @example scaleRow(Float64Array.of(1), Float64Array.of(2), [5]) // → Float64Array [2]
 */
export function scaleRow(mean: Float64Array, scale: Float64Array, x: Row, out?: Float64Array): Float64Array {
	const p = mean.length;
	const z = out ?? new Float64Array(p);
	for (let j = 0; j < p; j++) z[j] = (x[j] - mean[j]) / scale[j];
	return z;
}
