import { MonitoringInputError } from './errors';
import type { BaselineModel } from './model';
import { assertFiniteRow, type Row } from './scaling';

/** Everything the engine says about one wafer against one baseline. */
export interface WaferScore {
	/** Hotelling T² in the model plane: Σ_a t_a² / λ_a. */
	t2: number;
	/** Q (squared prediction error): ‖z − P t‖². */
	q: number;
	/** Combined index φ = Q·qWeight + T²·t2Weight (Yue & Qin 2001). */
	phi: number;
	t2Limit: number;
	qLimit: number;
	phiLimit: number;
	t2WarningLimit: number;
	qWarningLimit: number;
	phiWarningLimit: number;
	/** Statistic ÷ its action limit: > 1 is out of limits. */
	t2Ratio: number;
	qRatio: number;
	phiRatio: number;
	/** The largest of the three ratios decides the wafer's state. */
	state: 'ok' | 'warning' | 'alarm';
	/** Scores t = Pᵀ z (length k). */
	scores: Float64Array;
	/** Residuals e = z − P t in scaled units (length p). */
	residuals: Float64Array;
	/** The scaled row z = (x − mean) / scale (length p). */
	scaled: Float64Array;
}

/**
 * Build a row in the model's feature order from values keyed by feature name.
 *
 * @param model the baseline
 * @param values feature name → value
 * @returns the row
 * @throws MonitoringInputError naming the first feature that is absent or non-finite
 * @example rowFromRecord(model, { pressure_mtorr: 10.2, rf_w: 400 })
 */
export function rowFromRecord(model: BaselineModel, values: Readonly<Record<string, number>>): Float64Array {
	const x = new Float64Array(model.p);
	for (let j = 0; j < model.p; j++) {
		const f = model.featureNames[j];
		const v = values[f];
		if (typeof v !== 'number' || !Number.isFinite(v))
			throw new MonitoringInputError(
				`feature "${f}" is ${v === undefined ? 'missing' : String(v)}: the wafer is refused, not imputed`,
				{ feature: f }
			);
		x[j] = v;
	}
	return x;
}

/**
 * Score one wafer: T², Q, φ, their limits and ratios, scores and residuals.
 *
 * Formula: z = (x − mean)/scale; t = Pᵀz; T² = Σ_a t_a²/λ_a; e = z − P t; Q = Σ_j e_j²;
 * φ = Q/δ² + T²/χ²_α(k). Plain loops over the flat loadings (no matrix objects per wafer).
 * Source: Jackson (1991) "A User's Guide to Principal Components", §1.7 (T²) and §2.7 (Q);
 * Yue & Qin (2001) Ind. Eng. Chem. Res. 40:4403 (φ).
 *
 * @param model the baseline
 * @param x one value per feature, in `model.featureNames` order
 * @returns the wafer's score
 * @throws MonitoringInputError naming the feature when a value is missing or non-finite, or when the
 *   row has the wrong length
 * @example scoreWafer(model, row).t2Ratio > 1 // → true when T² is out of limits
 */
export function scoreWafer(model: BaselineModel, x: Row): WaferScore {
	assertFiniteRow(x, model.featureNames);
	const { p, k, mean, scale, loadings: P, eigenvalues: lam, limits } = model;
	const z = new Float64Array(p);
	const t = new Float64Array(k);
	for (let j = 0; j < p; j++) {
		const zj = (x[j] - mean[j]) / scale[j];
		z[j] = zj;
		const o = j * k;
		for (let a = 0; a < k; a++) t[a] += P[o + a] * zj;
	}
	let t2 = 0;
	for (let a = 0; a < k; a++) t2 += (t[a] * t[a]) / lam[a];
	const e = new Float64Array(p);
	let q = 0;
	for (let j = 0; j < p; j++) {
		const o = j * k;
		let fit = 0;
		for (let a = 0; a < k; a++) fit += P[o + a] * t[a];
		const ej = z[j] - fit;
		e[j] = ej;
		q += ej * ej;
	}
	const phi = q * model.phi.qWeight + t2 * model.phi.t2Weight;
	const t2Ratio = t2 / limits.t2;
	const qRatio = q / limits.q;
	const phiRatio = phi / limits.phi;
	const alarm = t2Ratio > 1 || qRatio > 1 || phiRatio > 1;
	const warning = t2 > limits.t2Warning || q > limits.qWarning || phi > limits.phiWarning;
	return {
		t2,
		q,
		phi,
		t2Limit: limits.t2,
		qLimit: limits.q,
		phiLimit: limits.phi,
		t2WarningLimit: limits.t2Warning,
		qWarningLimit: limits.qWarning,
		phiWarningLimit: limits.phiWarning,
		t2Ratio,
		qRatio,
		phiRatio,
		state: alarm ? 'alarm' : warning ? 'warning' : 'ok',
		scores: t,
		residuals: e,
		scaled: z
	};
}

/** T², Q and φ of many wafers, one entry per row. */
export interface BatchScores {
	t2: Float64Array;
	q: Float64Array;
	phi: Float64Array;
}

/**
 * Score many wafers fast: T², Q and φ only (call {@link scoreWafer} or {@link contributions} for the
 * detail of a flagged one). Buffers are allocated once per batch.
 *
 * Formula: as {@link scoreWafer}.
 * Source: as {@link scoreWafer}.
 *
 * @param model the baseline
 * @param rows an array of rows, or one flat Float64Array of m·p values (row i at i·p)
 * @returns T², Q and φ per row
 * @throws MonitoringInputError naming the feature and row of the first missing or non-finite value,
 *   or on a wrong length
 * @example scoreBatch(model, rows).q[3] // → Q of the fourth wafer
 */
export function scoreBatch(model: BaselineModel, rows: readonly Row[] | Float64Array): BatchScores {
	const { p, k, mean, scale, loadings: P, eigenvalues: lam } = model;
	const flat = rows instanceof Float64Array;
	if (flat && rows.length % p !== 0)
		throw new MonitoringInputError(`flat batch has ${rows.length} values, not a multiple of ${p} features`);
	const m = flat ? rows.length / p : rows.length;
	const out: BatchScores = { t2: new Float64Array(m), q: new Float64Array(m), phi: new Float64Array(m) };
	const z = new Float64Array(p);
	const t = new Float64Array(k);
	const { qWeight, t2Weight } = model.phi;
	for (let i = 0; i < m; i++) {
		let x: Row;
		let off = 0;
		if (flat) {
			x = rows;
			off = i * p;
		} else {
			x = (rows as readonly Row[])[i];
			if (x == null || x.length !== p) assertFiniteRow(x, model.featureNames, i);
		}
		t.fill(0);
		for (let j = 0; j < p; j++) {
			const v = x[off + j];
			if (!Number.isFinite(v)) {
				if (flat) assertFiniteRow((rows as Float64Array).subarray(off, off + p), model.featureNames, i);
				else assertFiniteRow(x, model.featureNames, i);
			}
			const zj = (v - mean[j]) / scale[j];
			z[j] = zj;
			const o = j * k;
			for (let a = 0; a < k; a++) t[a] += P[o + a] * zj;
		}
		let t2 = 0;
		for (let a = 0; a < k; a++) t2 += (t[a] * t[a]) / lam[a];
		let q = 0;
		for (let j = 0; j < p; j++) {
			const o = j * k;
			let fit = 0;
			for (let a = 0; a < k; a++) fit += P[o + a] * t[a];
			const ej = z[j] - fit;
			q += ej * ej;
		}
		out.t2[i] = t2;
		out.q[i] = q;
		out.phi[i] = q * qWeight + t2 * t2Weight;
	}
	return out;
}
