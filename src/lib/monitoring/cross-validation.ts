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

/**
 * K-fold cross-validated T² and Q of the golden wafers: each fold is left out, the model refitted on
 * the rest with the same options and k, and the left-out wafers scored. In-sample statistics are
 * biased low — most of all Q when n < p, because the fitted components absorb part of each training
 * wafer's own noise — so the in-control level of a drift chart is taken from these instead.
 *
 * Formula: for fold f, model_{−f} = fit(X without fold f); T²_i, Q_i = score(model_{−f}, x_i) for i in f;
 * ratios divide by the full model's limits. Folds are interleaved (i mod K), so each spans the golden
 * period. Source: cross-validation of PCA models as in Wold (1978) "Cross-validatory estimation of the
 * number of components in factor and principal components models", Technometrics 20:397; the use of
 * out-of-sample in-control data to set chart parameters: Montgomery (2009) §9.2 (common practice).
 *
 * @param rows the golden rows the model was fitted on
 * @param model the full model (its k, scaling, α and feature names are reused)
 * @param folds K, 2 ≤ K ≤ n (default 5)
 * @returns out-of-sample ratios per golden row
 * @throws MonitoringInputError when a fold would leave too few rows to fit k components
 * @example crossValidatedScores(golden, model).qRatio // → Float64Array of n out-of-sample Q/limit
 */
export function crossValidatedScores(rows: readonly Row[], model: BaselineModel, folds = 5): CrossValidatedScores {
	const n = rows.length;
	if (!(Number.isInteger(folds) && folds >= 2 && folds <= n)) throw new RangeError(`folds must be an integer in [2, ${n}]`);
	if (n - Math.ceil(n / folds) < model.k + 2)
		throw new MonitoringInputError(`cross-validation needs at least ${model.k + 2} rows per training fold`);
	const options: FitOptions = {
		featureNames: model.featureNames,
		alpha: model.alpha,
		warningAlpha: model.warningAlpha,
		scaling: model.scaling,
		components: model.k,
		qMethod: model.qMethod,
		route: model.route,
		scaleFloor: model.scaleFloor
	};
	const t2Ratio = new Float64Array(n);
	const qRatio = new Float64Array(n);
	for (let f = 0; f < folds; f++) {
		const train: Row[] = [];
		const test: number[] = [];
		rows.forEach((r, i) => (i % folds === f ? test.push(i) : train.push(r)));
		const m = fitBaseline(train, options);
		const s = scoreBatch(m, test.map((i) => rows[i]));
		test.forEach((i, j) => {
			t2Ratio[i] = s.t2[j] / model.limits.t2;
			qRatio[i] = s.q[j] / model.limits.q;
		});
	}
	return { t2Ratio, qRatio, folds };
}
