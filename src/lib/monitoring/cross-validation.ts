import { fitBaseline, type FitOptions } from './baseline';
import { MonitoringInputError } from './errors';
import type { BaselineModel } from './model';
import type { Row } from './scaling';
import { scoreBatch } from './scoring';

/** Out-of-sample statistics of the golden wafers, each scored by a model that did not see it. */
export interface CrossValidatedScores {
	/** T² / the full model's T² limit, one per golden row, in input order. */
	t2Ratio: Float64Array;
	/** Q / the full model's Q limit, one per golden row, in input order. */
	qRatio: Float64Array;
	folds: number;
}

/** Raw out-of-sample T² and Q of the golden rows (no division by a limit). */
export interface CrossValidatedStatistics {
	/** T² of each golden row under the model fitted without its fold, in input order. */
	t2: Float64Array;
	/** Q of each golden row under the model fitted without its fold, in input order. */
	q: Float64Array;
	folds: number;
}

/** The parts of a model a cross-validation refit reuses. */
export type CrossValidationSpec = Pick<
	BaselineModel,
	'featureNames' | 'alpha' | 'warningAlpha' | 'scaling' | 'k' | 'qMethod' | 'route' | 'scaleFloor'
>;

/**
 * Default number of folds for cross-validating a golden set of n rows: leave-one-out up to 40 rows
 * (each refit sees n − 1 rows, so the out-of-sample statistics describe a model of almost the full
 * size), then 20-fold (each refit sees 95 % of the rows; with 10 folds the smaller refits made Q
 * limits measurably wide at n = 100, p = 1,000 in bench/calibration.ts; leave-one-out would cost n
 * refits).
 *
 * Formula: K = n for n ≤ 40, else 20. Source: choice of K as a bias/cost trade-off, Hastie,
 * Tibshirani & Friedman (2009) "The Elements of Statistical Learning", §7.10.1 (common practice).
 *
 * @param n number of golden rows
 * @returns K
 * @throws nothing
 * @example defaultFolds(20) // → 20
 */
export function defaultFolds(n: number): number {
	return n <= 40 ? n : 20;
}

/**
 * K-fold cross-validated raw T² and Q of the golden rows: each fold is left out, the model refitted
 * on the rest with the same options and k (limits from the large-sample formulas: only the
 * statistics are used), and the left-out rows scored. Folds are interleaved (i mod K), so each spans
 * the golden period.
 *
 * Formula: for fold f, model_{−f} = fit(X without fold f); T²_i, Q_i = score(model_{−f}, x_i) for i
 * in f. Source: Wold (1978) "Cross-validatory estimation of the number of components in factor and
 * principal components models", Technometrics 20:397.
 *
 * @param rows the golden rows
 * @param spec the model's options (its k, scaling, α and feature names are reused)
 * @param folds K, 2 ≤ K ≤ n
 * @returns out-of-sample T² and Q per golden row
 * @throws RangeError on a bad K; MonitoringInputError when a fold would leave too few rows to fit k
 *   components
 * @example crossValidatedStatistics(golden, model, 20).q // → Float64Array of 20 out-of-sample Q
 */
export function crossValidatedStatistics(rows: readonly Row[], spec: CrossValidationSpec, folds: number): CrossValidatedStatistics {
	const n = rows.length;
	if (!(Number.isInteger(folds) && folds >= 2 && folds <= n)) throw new RangeError(`folds must be an integer in [2, ${n}]`);
	if (n - Math.ceil(n / folds) < spec.k + 2)
		throw new MonitoringInputError(`cross-validation needs at least ${spec.k + 2} rows per training fold`);
	const options: FitOptions = {
		featureNames: spec.featureNames,
		alpha: spec.alpha,
		warningAlpha: spec.warningAlpha,
		scaling: spec.scaling,
		components: spec.k,
		qMethod: spec.qMethod,
		route: spec.route,
		scaleFloor: spec.scaleFloor,
		limits: 'theory'
	};
	const t2 = new Float64Array(n);
	const q = new Float64Array(n);
	for (let f = 0; f < folds; f++) {
		const train: Row[] = [];
		const test: number[] = [];
		rows.forEach((r, i) => (i % folds === f ? test.push(i) : train.push(r)));
		const m = fitBaseline(train, options);
		const s = scoreBatch(m, test.map((i) => rows[i]));
		test.forEach((i, j) => {
			t2[i] = s.t2[j];
			q[i] = s.q[j];
		});
	}
	return { t2, q, folds };
}

/**
 * K-fold cross-validated T² and Q of the golden wafers as ratios to the full model's limits. In-sample
 * statistics are biased low — most of all Q when n < p, because the fitted components absorb part of
 * each training wafer's own noise — so the in-control level of a drift chart is taken from these.
 *
 * Formula: as {@link crossValidatedStatistics}; ratios divide by the full model's limits. Source:
 * Wold (1978) Technometrics 20:397; the use of out-of-sample in-control data to set chart parameters:
 * Montgomery (2009) §9.2 (common practice).
 *
 * @param rows the golden rows the model was fitted on
 * @param model the full model (its k, scaling, α and feature names are reused)
 * @param folds K, 2 ≤ K ≤ n (default 5)
 * @returns out-of-sample ratios per golden row
 * @throws MonitoringInputError when a fold would leave too few rows to fit k components
 * @example crossValidatedScores(golden, model).qRatio // → Float64Array of n out-of-sample Q/limit
 */
export function crossValidatedScores(rows: readonly Row[], model: BaselineModel, folds = 5): CrossValidatedScores {
	const s = crossValidatedStatistics(rows, model, folds);
	return {
		t2Ratio: s.t2.map((v) => v / model.limits.t2),
		qRatio: s.q.map((v) => v / model.limits.q),
		folds
	};
}
