import { MonitoringInputError } from './errors';
import type { BaselineModel } from './model';
import { assertFiniteRow, type Row } from './scaling';

// Scoring runs for every wafer of every chamber, so it is written for speed: loadings are also kept
// component-major (k × p, cached per model, never serialized) so each score t_a is one long dot
// product, two components share a pass, and validity is checked once per wafer (a non-finite input
// always makes T² or Q non-finite), with a scan for the culprit only then.

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
	/**
	 * The combined ratio that decides the wafer's state ({@link stateRatio}): max(T²/T²_{α/2},
	 * Q/Q_{α/2}) on current models, the largest of the three ratios on models stored before.
	 */
	stateRatio: number;
	/**
	 * `alarm` when the combined ratio exceeds 1 (probability ≤ α in control); `warning` when any
	 * statistic exceeds its own α limit or its warning limit without that; else `ok`.
	 */
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
 * Formula: x_j = values[featureNames[j]]. Source: none needed (a lookup); never imputes.
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

interface Kernel {
	p: number;
	k: number;
	mean: Float64Array;
	invScale: Float64Array;
	/** Loadings component-major: component a, feature j at a·p + j. */
	pt: Float64Array;
	lam: Float64Array;
}

const kernels = new WeakMap<BaselineModel, Kernel>();

function kernelOf(model: BaselineModel): Kernel {
	let kn = kernels.get(model);
	if (kn && kn.lam === model.eigenvalues && kn.mean === model.mean) return kn;
	const { p, k, loadings } = model;
	if (loadings.length !== p * k) throw new MonitoringInputError('model loadings do not match p × k');
	const pt = new Float64Array(p * k);
	for (let j = 0; j < p; j++) for (let a = 0; a < k; a++) pt[a * p + j] = loadings[j * k + a];
	kn = { p, k, mean: model.mean, invScale: Float64Array.from(model.scale, (s) => 1 / s), pt, lam: model.eigenvalues };
	kernels.set(model, kn);
	return kn;
}

/** z = (x − mean)/scale, t = Pᵀz, e = z − Pt; returns T² and Q. `x` is read from `off`. */
function project(kn: Kernel, x: Float64Array, off: number, z: Float64Array, t: Float64Array, e: Float64Array): [number, number] {
	const { p, k, mean, invScale, pt, lam } = kn;
	for (let j = 0; j < p; j++) {
		const v = (x[off + j] - mean[j]) * invScale[j];
		z[j] = v;
		e[j] = v;
	}
	let a = 0;
	for (; a + 1 < k; a += 2) {
		const o0 = a * p;
		const o1 = o0 + p;
		let s0 = 0;
		let s1 = 0;
		for (let j = 0; j < p; j++) {
			const zj = z[j];
			s0 += pt[o0 + j] * zj;
			s1 += pt[o1 + j] * zj;
		}
		t[a] = s0;
		t[a + 1] = s1;
	}
	for (; a < k; a++) {
		const o = a * p;
		let s0 = 0;
		for (let j = 0; j < p; j++) s0 += pt[o + j] * z[j];
		t[a] = s0;
	}
	let t2 = 0;
	for (let b = 0; b < k; b++) t2 += (t[b] * t[b]) / lam[b];
	a = 0;
	for (; a + 1 < k; a += 2) {
		const o0 = a * p;
		const o1 = o0 + p;
		const t0 = t[a];
		const t1 = t[a + 1];
		for (let j = 0; j < p; j++) e[j] -= pt[o0 + j] * t0 + pt[o1 + j] * t1;
	}
	for (; a < k; a++) {
		const o = a * p;
		const t0 = t[a];
		for (let j = 0; j < p; j++) e[j] -= pt[o + j] * t0;
	}
	let q = 0;
	for (let j = 0; j < p; j++) q += e[j] * e[j];
	return [t2, q];
}

/** Copy a row into a Float64Array (validating it), unless it already is one of the right length. */
function asFloat64(x: Row, model: BaselineModel, buf: Float64Array, rowIndex?: number): Float64Array {
	if (x instanceof Float64Array && x.length === model.p) return x;
	assertFiniteRow(x, model.featureNames, rowIndex);
	for (let j = 0; j < model.p; j++) buf[j] = x[j];
	return buf;
}

function checkFinite(t2: number, q: number, x: Float64Array, off: number, model: BaselineModel, row?: number): void {
	if (Number.isFinite(t2) && Number.isFinite(q)) return;
	assertFiniteRow(x.subarray(off, off + model.p), model.featureNames, row);
	// Finite inputs so large that squares overflow: report the statistics as +∞ (far out of limits).
}

/**
 * Score one wafer: T², Q, φ, their limits and ratios, scores and residuals.
 *
 * Formula: z = (x − mean)/scale; t = Pᵀz; T² = Σ_a t_a²/λ_a; e = z − P t; Q = Σ_j e_j²;
 * φ = Q/δ² + T²/χ²_α(k). Plain loops over flat typed arrays (no matrix objects per wafer).
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
	const kn = kernelOf(model);
	const { p, k } = model;
	const xs = asFloat64(x, model, new Float64Array(p));
	const z = new Float64Array(p);
	const e = new Float64Array(p);
	const t = new Float64Array(k);
	const [t2, q] = project(kn, xs, 0, z, t, e);
	checkFinite(t2, q, xs, 0, model);
	const limits = model.limits;
	const phi = q * model.phi.qWeight + t2 * model.phi.t2Weight;
	const t2Ratio = t2 / limits.t2;
	const qRatio = q / limits.q;
	const phiRatio = phi / limits.phi;
	const combined = stateRatio(model, t2, q, phi);
	const alarm = combined > 1;
	const warning = t2Ratio > 1 || qRatio > 1 || phiRatio > 1 || t2 > limits.t2Warning || q > limits.qWarning || phi > limits.phiWarning;
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
		stateRatio: combined,
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
 * Score many wafers fast: T², Q and φ only (call {@link scoreWafer} or `contributions` for the
 * detail of a flagged one). Buffers are allocated once per batch; results equal scoreWafer's exactly.
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
	const kn = kernelOf(model);
	const { p, k } = model;
	const flat = rows instanceof Float64Array;
	if (flat && rows.length % p !== 0)
		throw new MonitoringInputError(`flat batch has ${rows.length} values, not a multiple of ${p} features`);
	const m = flat ? rows.length / p : rows.length;
	const out: BatchScores = { t2: new Float64Array(m), q: new Float64Array(m), phi: new Float64Array(m) };
	const z = new Float64Array(p);
	const e = new Float64Array(p);
	const t = new Float64Array(k);
	const buf = new Float64Array(p);
	const { qWeight, t2Weight } = model.phi;
	for (let i = 0; i < m; i++) {
		let src: Float64Array;
		let off = 0;
		if (flat) {
			src = rows;
			off = i * p;
		} else src = asFloat64((rows as readonly Row[])[i], model, buf, i);
		const [t2, q] = project(kn, src, off, z, t, e);
		checkFinite(t2, q, src, off, model, i);
		out.t2[i] = t2;
		out.q[i] = q;
		out.phi[i] = q * qWeight + t2 * t2Weight;
	}
	return out;
}

/**
 * The combined ratio deciding a wafer's state: above 1, the wafer is beyond limit.
 *
 * Formula: max(T² / T²_{α/2}, Q / Q_{α/2}) — each statistic at α/2, so by Bonferroni's inequality an
 * in-control wafer is beyond limit with probability ≤ α (≈ α, since T² and Q live in orthogonal
 * subspaces and are nearly independent). Models stored before the state limits existed keep their
 * rule: max(T²/T²_α, Q/Q_α, φ/φ_α), whose in-control rate is up to 2–3α.
 * Source: Bonferroni inequality, e.g. Johnson & Wichern (2007) "Applied Multivariate Statistical
 * Analysis", §5.4; combined T²/Q monitoring, MacGregor & Kourti (1995) Control Eng. Practice 3:403.
 *
 * @param model the baseline
 * @param t2 the wafer's T²
 * @param q the wafer's Q
 * @param phi the wafer's φ (used by older models only)
 * @returns the combined ratio
 * @throws nothing
 * @example stateRatio(model, model.limits.t2State!, 0, 0) // → 1
 */
export function stateRatio(model: BaselineModel, t2: number, q: number, phi: number): number {
	const L = model.limits;
	if (L.t2State !== undefined && L.qState !== undefined) return Math.max(t2 / L.t2State, q / L.qState);
	return Math.max(t2 / L.t2, q / L.q, phi / L.phi);
}

/**
 * Whether a wafer's combined state is beyond limit ({@link stateRatio} > 1).
 *
 * Source: as {@link stateRatio}.
 *
 * @param model the baseline
 * @param t2 T²
 * @param q Q
 * @param phi φ
 * @returns true when beyond limit
 * @throws nothing
 * @example beyondLimit(model, 0, 0, 0) // → false
 */
export function beyondLimit(model: BaselineModel, t2: number, q: number, phi: number): boolean {
	return stateRatio(model, t2, q, phi) > 1;
}
