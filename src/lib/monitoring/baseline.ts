import { brokenStickComponents } from './components';
import { crossValidatedStatistics, defaultFolds, type CrossValidatedStatistics } from './cross-validation';
import { MonitoringInputError } from './errors';
import {
		cubeRootLaw,
	cubeRootPredictionLimit,
	phiLimit,
	phiParameters,
	qLimit,
	qLimitThreeMoment,
	residualMoments,
		t2Limit,
	type QLimitMethod
} from './limits';
import type { BaselineModel, LimitCalibration } from './model';
import { decompose, type PcaRoute } from './pca';
import { DEFAULT_SCALE_FLOOR, fitScaling, type Row, type ScaleFloor, type ScalingMethod } from './scaling';

/** Options of {@link fitBaseline}. */
export interface FitOptions {
	/** One name per column, unique. */
	featureNames: readonly string[];
	/** False-alarm probability of the action limits (default 0.01). */
	alpha?: number;
	/** False-alarm probability of the warning limits (default 0.05). */
	warningAlpha?: number;
	/** Default `autoscale`. */
	scaling?: ScalingMethod;
	/** A number of components, or `auto` (broken-stick rule, {@link brokenStickComponents}). Default `auto`. */
	components?: number | 'auto';
	/** Default `jackson-mudholkar`. */
	qMethod?: QLimitMethod;
	/** Default `gram` (faster; see bench/engine.ts). */
	route?: PcaRoute;
	/** Near-zero-variance floor; default {@link DEFAULT_SCALE_FLOOR}. */
	scaleFloor?: Partial<ScaleFloor>;
	/**
	 * How the limits are set: `cross-validated` (default; {@link calibrateLimits}) or `theory` (the
	 * large-sample formulas on the golden eigenvalues, which treat them as exact — too wide or too
	 * tight at small n and when n < p; kept for reference and for the cross-validation refits).
	 */
	limits?: 'cross-validated' | 'theory';
	/** Folds of the cross-validation; default {@link defaultFolds} (leave-one-out up to 40 rows, then 10). */
	folds?: number;
}

/** A fitted model and the out-of-sample golden statistics its limits came from (null with theory limits). */
export interface DetailedFit {
	model: BaselineModel;
	crossValidation: CrossValidatedStatistics | null;
}

function checkAlpha(name: string, a: number): void {
	if (!(a > 0 && a < 0.5)) throw new RangeError(`${name} must lie in (0, 0.5), got ${a}`);
}

/**
 * The fit with the large-sample limits (the `theory` limits of {@link FitOptions}); see
 * {@link fitBaseline} for the formulas.
 */
function fitTheory(rows: readonly Row[], options: FitOptions): BaselineModel {
	const featureNames = [...options.featureNames];
	const alpha = options.alpha ?? 0.01;
	const warningAlpha = options.warningAlpha ?? 0.05;
	const method = options.scaling ?? 'autoscale';
	const qMethod = options.qMethod ?? 'jackson-mudholkar';
	const route = options.route ?? 'gram';
	const requested = options.components ?? 'auto';
	checkAlpha('alpha', alpha);
	checkAlpha('warningAlpha', warningAlpha);
	if (!(warningAlpha >= alpha)) throw new RangeError('warningAlpha must be ≥ alpha (a warning comes before an alarm)');
	if (!['autoscale', 'pareto', 'none'].includes(method)) throw new RangeError(`unknown scaling "${method}"`);
	const p = featureNames.length;
	if (p < 2) throw new MonitoringInputError('a baseline needs at least 2 features');
	const seen = new Set<string>();
	for (const f of featureNames) {
		if (seen.has(f)) throw new MonitoringInputError(`feature name "${f}" appears twice`, { feature: f });
		seen.add(f);
	}
	const n = rows.length;
	if (n < 3) throw new MonitoringInputError(`a baseline needs at least 3 golden wafers, got ${n}`);

	const floor = { ...DEFAULT_SCALE_FLOOR, ...options.scaleFloor };
	const sc = fitScaling(rows, featureNames, method, floor);
	const Z = new Float64Array(n * p);
	for (let i = 0; i < n; i++) {
		const x = rows[i];
		for (let j = 0; j < p; j++) Z[i * p + j] = (x[j] - sc.mean[j]) / sc.scale[j];
	}
	const dec = decompose(Z, n, p, route);
	const eigenvalues = dec.eigenvalues;
	const r = eigenvalues.length;
	if (r < 2)
		throw new MonitoringInputError(
			`the golden wafers vary in ${r} direction(s) only: a baseline needs at least 2 (more distinct wafers or features)`
		);
	let k: number;
	if (requested === 'auto') k = brokenStickComponents(eigenvalues, n);
	else {
		k = requested;
		if (!(Number.isInteger(k) && k >= 1 && k <= n - 2 && k < r))
			throw new MonitoringInputError(
				`components = ${k} is not possible here: need an integer 1 ≤ k ≤ min(n − 2, rank − 1) = ${Math.min(n - 2, r - 1)}`
			);
	}
	let total = 0;
	for (let a = 0; a < r; a++) total += eigenvalues[a];
	const explainedVariance = Float64Array.from(eigenvalues, (l) => l / total);
	const tail = eigenvalues.subarray(k);
	const residual = residualMoments(tail);
	const q = qLimit(tail, alpha, qMethod);
	const phi = phiParameters(k, residual, q, alpha);
	return {
		format: 'lockstep-pca-baseline',
		version: 1,
		featureNames,
		n,
		p,
		k,
		componentsRule: requested === 'auto' ? 'broken-stick' : 'fixed',
		scaling: method,
		mean: sc.mean,
		sd: sc.sd,
		scale: sc.scale,
		scaleFloor: sc.floor,
		lowVarianceFeatures: sc.lowVariance,
		loadings: dec.loadings(k),
		eigenvalues,
		explainedVariance,
		route,
		alpha,
		warningAlpha,
		qMethod,
		residual,
		phi,
		limits: {
			t2: t2Limit(k, n, alpha),
			q,
			phi: phiLimit(phi, alpha),
			t2Warning: t2Limit(k, n, warningAlpha),
			qWarning: qLimit(tail, warningAlpha, qMethod),
			phiWarning: phiLimit(phi, warningAlpha),
			t2State: t2Limit(k, n, alpha / 2),
			qState: qLimit(tail, alpha / 2, qMethod)
		},
		limitCalibration: 'theory',
		limitMethod:
			`theory: T² from the F law of a new observation (Tracy, Young & Mason 1992), Q from the golden residual eigenvalues (${qMethod}), ` +
			'φ after Yue & Qin (2001); the golden eigenvalues are treated as exact. The wafer state is beyond limit when T² or Q exceeds its limit at α/2 (Bonferroni).'
	};
}

/**
 * Fit a PCA baseline on golden wafers: scaling, components, and T², Q and φ limits — by default
 * calibrated on cross-validated (out-of-sample) golden statistics ({@link calibrateLimits}).
 *
 * Formula: Z = (X − 1 meanᵀ) diag(s)⁻¹; S = ZᵀZ/(n − 1) = P Λ Pᵀ; keep k components; limits as
 * {@link calibrateLimits} (default) or the large-sample formulas: T²_α = k(n−1)(n+1)/(n(n−k))
 * F_α(k, n−k) (Tracy, Young & Mason 1992), Q_α after Jackson & Mudholkar (1979) or Box (1954), φ after
 * Yue & Qin (2001). Either way the wafer's combined state uses T² and Q at α/2 each (Bonferroni), so
 * an in-control wafer is beyond limit with probability ≤ α, not 2α.
 * Source: Jackson (1991) "A User's Guide to Principal Components"; MacGregor & Kourti (1995)
 * "Statistical process control of multivariate processes", Control Eng. Practice 3:403.
 *
 * @param rows golden rows (n ≥ 3), each one value per feature, all finite
 * @param options see {@link FitOptions}
 * @returns the fitted model (its `limitMethod` says how the limits were set)
 * @throws MonitoringInputError on a missing/non-finite value (naming the feature and row), a row of
 *   the wrong length, duplicate feature names, too few rows, or a k that leaves no T² or Q limit;
 *   RangeError on a bad α
 * @example
 * const m = fitBaseline([[1, 2], [2, 4.1], [3, 5.9], [4, 8.2]], { featureNames: ['a', 'b'], components: 1 });
 * m.k // → 1
 */
export function fitBaseline(rows: readonly Row[], options: FitOptions): BaselineModel {
	return fitBaselineDetailed(rows, options).model;
}

/**
 * {@link fitBaseline}, also returning the cross-validated golden statistics (for Phase I screening,
 * {@link phaseOne}, and the drift charts' reference) so they are computed once.
 *
 * Source: as {@link fitBaseline}.
 *
 * @param rows golden rows
 * @param options see {@link FitOptions}
 * @returns the model and its cross-validated statistics (null when the limits are theory)
 * @throws as {@link fitBaseline}
 * @example fitBaselineDetailed(rows, { featureNames }).crossValidation?.folds // → n (n ≤ 40)
 */
export function fitBaselineDetailed(rows: readonly Row[], options: FitOptions): DetailedFit {
	const mode = options.limits ?? 'cross-validated';
	if (mode !== 'cross-validated' && mode !== 'theory') throw new RangeError(`unknown limits "${mode}"`);
	const theory = fitTheory(rows, options);
	if (mode === 'theory') return { model: theory, crossValidation: null };
	const n = rows.length;
	const folds = options.folds ?? defaultFolds(n);
	let cv: CrossValidatedStatistics;
	try {
		cv = crossValidatedStatistics(rows, theory, folds);
		return { model: calibrateLimits(theory, cv), crossValidation: cv };
	} catch (e) {
		if (!(e instanceof MonitoringInputError)) throw e;
		// Too few rows to refit k components without a fold, or out-of-sample statistics that do not
		// vary: the theory limits stay, and the model says so.
		return {
			model: { ...theory, limitMethod: `${theory.limitMethod} Cross-validated limits were not possible: ${e.message}.` },
			crossValidation: null
		};
	}
}

/**
 * Limits calibrated on cross-validated (out-of-sample) golden statistics.
 *
 * Each golden wafer's T² and Q come from a model fitted without it ({@link crossValidatedStatistics}),
 * so they behave like a new wafer's — unlike in-sample statistics, whose Q is biased low when n < p
 * (the components absorb the wafer's own noise) and whose large-sample Q limits treat the golden
 * eigenvalues as exact (at n = 20 they gave 4.8–6.4 % beyond Q at α = 1 %; at n ≥ 50 with p = 1,000
 * 0.0–0.2 %, far too wide to see a leak).
 * Formula:
 * - Q_α and φ_α: a prediction limit on the cube roots of the cross-validated values,
 *   (ū + t_α((n−1)/2) s_u √(1 + 2/n))³ ({@link cubeRootPredictionLimit}; Wilson & Hilferty 1931,
 *   Hahn & Meeker 1991), with φ = Q/Q_α + T²/T²_α (Yue & Qin 2001, each statistic over its limit).
 *   When n > p, the wider of that and the three-moment law of the residual eigenvalues (Imhof 1961)
 *   scaled to the mean of the cross-validated Q: the eigenvalues then give Q's shape, the
 *   out-of-sample values its level.
 * - T²_α: the F limit of a new wafer, k(n−1)(n+1)/(n(n−k)) F_α(k, n−k) (Tracy, Young & Mason 1992),
 *   which already allows for the golden set's size, times c = min(1, mean(cross-validated T²) / the F
 *   law's mean k(n−1)(n+1)/(n(n−k−2))): when n < p the new wafers' scores shrink and the limit follows
 *   them down, never up.
 * - Warning limits: the same at the warning α; state limits: T² and Q at α/2 each (Bonferroni).
 * Calibration: bench/calibration.ts (n 20–300 × p 12–1,000, k = 3, 50 golden sets a cell) and
 * tests/unit/monitoring/calibration.test.ts; figures in README.md.
 *
 * @param model a model with theory limits (its k, n and α are used)
 * @param cv the out-of-sample T² and Q of its golden rows
 * @returns a new model with calibrated limits, φ weights, `limitCalibration`, `crossValidation` and `limitMethod`
 * @throws MonitoringInputError when the out-of-sample statistics do not vary
 * @example calibrateLimits(theoryModel, crossValidatedStatistics(rows, theoryModel, 20)).limitCalibration // → 'cross-validated'
 */
export function calibrateLimits(model: BaselineModel, cv: CrossValidatedStatistics): BaselineModel {
	const { alpha, warningAlpha, k, n } = model;
	const m = cv.t2.length;
	let cvMean = 0;
	for (let i = 0; i < m; i++) cvMean += cv.t2[i] / m;
	const theoryMean = n - k - 2 > 0 ? (k * (n - 1) * (n + 1)) / (n * (n - k - 2)) : Infinity;
	const factor = Math.min(1, cvMean / theoryMean);
	const t2At = (a: number) => factor * t2Limit(k, n, a);
	const qLaw = cubeRootLaw(cv.q);
	// With n > p every residual eigenvalue is estimated and their spread gives Q's shape (few, uneven
	// residual directions make a heavier tail than the cube-root normal law allows: at p = 12 the
	// cube-root limit alone let 1.5–1.9 % of in-control wafers through); its scale comes from the
	// out-of-sample Q. The wider of the two limits is used.
	const tail = model.eigenvalues.subarray(k);
	const fullRank = model.eigenvalues.length === model.p;
	const qScale = qLaw.n > 0 ? cv.q.reduce((s, v) => s + v, 0) / qLaw.n / model.residual.theta1 : 1;
	const qAt = (a: number) => Math.max(cubeRootPredictionLimit(qLaw, a), fullRank ? qScale * qLimitThreeMoment(tail, a) : 0);
	const t2 = t2At(alpha);
	const q = qAt(alpha);
	const phiLaw = cubeRootLaw(cv.q.map((v, i) => v / q + cv.t2[i] / t2));
	const calibration: LimitCalibration = {
		folds: cv.folds,
		t2: { cvMean, theoryMean, factor },
		q: { ...qLaw, shapeScale: fullRank ? qScale : null },
		phi: { ...phiLaw }
	};
	const how = cv.folds === m ? 'leave-one-out' : `${cv.folds}-fold`;
	return {
		...model,
		// g and h of φ are not used by cross-validated limits; kept as the χ² law with φ's moments.
		phi: { t2Weight: 1 / t2, qWeight: 1 / q, g: model.phi.g, h: model.phi.h },
		limits: {
			t2,
			q,
			phi: cubeRootPredictionLimit(phiLaw, alpha),
			t2Warning: t2At(warningAlpha),
			qWarning: qAt(warningAlpha),
			phiWarning: cubeRootPredictionLimit(phiLaw, warningAlpha),
			t2State: t2At(alpha / 2),
			qState: qAt(alpha / 2)
		},
		limitCalibration: 'cross-validated',
		crossValidation: calibration,
		limitMethod:
			`cross-validated (${how}: each of the ${m} golden wafers scored by a model fitted without it). ` +
			'Q: prediction limit on the cube roots of the out-of-sample Q (Wilson & Hilferty 1931; Hahn & Meeker 1991). ' +
			`T²: F limit of a new wafer (Tracy, Young & Mason 1992) × ${factor.toFixed(3)} (out-of-sample T² mean ${cvMean.toPrecision(3)} vs ${theoryMean.toPrecision(3)} expected; never above 1). ` +
			'φ = Q/Q-limit + T²/T²-limit (Yue & Qin 2001), limit as for Q. ' +
			'The wafer state is beyond limit when T² or Q exceeds its limit at α/2 (Bonferroni), so at most α of in-control wafers.'
	};
}
