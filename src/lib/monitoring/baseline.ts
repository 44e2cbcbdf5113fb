import { brokenStickComponents } from './components';
import { MonitoringInputError } from './errors';
import {
	phiLimit,
	phiParameters,
	qLimit,
	residualMoments,
	t2Limit,
	type QLimitMethod
} from './limits';
import type { BaselineModel } from './model';
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
}

function checkAlpha(name: string, a: number): void {
	if (!(a > 0 && a < 0.5)) throw new RangeError(`${name} must lie in (0, 0.5), got ${a}`);
}

/**
 * Fit a PCA baseline on golden wafers: scaling, components, T², Q and φ limits.
 *
 * Formula: Z = (X − 1 meanᵀ) diag(s)⁻¹; S = ZᵀZ/(n − 1) = P Λ Pᵀ; keep k components; limits
 * T²_α = k(n−1)(n+1)/(n(n−k)) F_α(k, n−k) (Tracy, Young & Mason 1992), Q_α after Jackson &
 * Mudholkar (1979) or Box (1954), φ after Yue & Qin (2001), each at α and at the warning α.
 * Source: Jackson (1991) "A User's Guide to Principal Components"; MacGregor & Kourti (1995)
 * "Statistical process control of multivariate processes", Control Eng. Practice 3:403.
 *
 * @param rows golden rows (n ≥ 3), each one value per feature, all finite
 * @param options see {@link FitOptions}
 * @returns the fitted model
 * @throws MonitoringInputError on a missing/non-finite value (naming the feature and row), a row of
 *   the wrong length, duplicate feature names, too few rows, or a k that leaves no T² or Q limit;
 *   RangeError on a bad α
 * @example
 * const m = fitBaseline([[1, 2], [2, 4.1], [3, 5.9], [4, 8.2]], { featureNames: ['a', 'b'], components: 1 });
 * m.k // → 1
 */
export function fitBaseline(rows: readonly Row[], options: FitOptions): BaselineModel {
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
			phiWarning: phiLimit(phi, warningAlpha)
		}
	};
}
