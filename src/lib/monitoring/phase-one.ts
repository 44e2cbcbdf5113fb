import { MonitoringInputError } from './errors';
import { cubeRootLaw, cubeRootPredictionLimit } from './limits';
import type { BaselineModel } from './model';
import { fUpper } from './quantiles';
import type { Row } from './scaling';
import { scoreBatch } from './scoring';

/**
 * Phase I (retrospective) upper limit of a golden wafer's own, in-sample T².
 *
 * Formula: T²_α = (n − 1)²/n · B_{1−α}(k/2, (n − k − 1)/2), B the Beta quantile. A golden wafer is
 * part of the mean and covariance it is measured against, so its T² is bounded by (n − 1)²/n and
 * follows a scaled Beta law, not the F law of a new wafer (at n = 20, k = 3 the F limit at α = 1 % is
 * 18.25; the Beta limit is 8.99). The Beta quantile
 * is taken through the F law: if F ~ F(2a, 2b) then aF/(b + aF) ~ Beta(a, b).
 * Source: Tracy, Young & Mason (1992) "Multivariate control charts for individual observations",
 * J. Quality Technology 24:88, eq. (4); the Beta–F identity: Johnson, Kotz & Balakrishnan (1995)
 * "Continuous Univariate Distributions" vol. 2, ch. 25.
 *
 * @param n number of golden wafers
 * @param k number of components (1 ≤ k ≤ n − 2)
 * @param alpha upper-tail probability, 0 < α < 1
 * @returns the limit
 * @throws RangeError on a bad n, k or α
 * @example phaseOneT2Limit(20, 3, 0.01) // → 8.9901 (scipy: 19²/20 · beta.ppf(0.99, 1.5, 8))
 */
export function phaseOneT2Limit(n: number, k: number, alpha: number): number {
	if (!(Number.isInteger(n) && Number.isInteger(k) && k >= 1 && k <= n - 2))
		throw new RangeError(`Phase I T² limit needs integers 1 ≤ k ≤ n − 2, got k = ${k}, n = ${n}`);
	const a = k / 2;
	const b = (n - k - 1) / 2;
	const f = fUpper(alpha, 2 * a, 2 * b);
	const beta = (a * f) / (b + a * f);
	return (((n - 1) * (n - 1)) / n) * beta;
}

/** One golden wafer's Phase I screening. */
export interface PhaseOneWafer {
	/** Position in the golden rows. */
	index: number;
	/** In-sample T² under the full model. */
	t2: number;
	/** Out-of-sample Q (model fitted without this wafer, or without its fold when n > 40). */
	q: number;
	/** The Q limit this wafer was judged against: from the other golden wafers (first-pass outliers left out). */
	qLimit: number;
	flagged: boolean;
	/** Why it is proposed for removal (empty when not flagged). */
	reasons: string[];
}

/** The screening of a golden set. */
export interface PhaseOneResult {
	/** Probability that an in-control golden wafer is flagged (T² and Q at α/2 each). */
	alpha: number;
	/** Beta limit of the in-sample T² at α/2. */
	t2Limit: number;
	/** Limit of the out-of-sample Q at α/2 from the golden wafers not flagged (each wafer is judged by its own `qLimit`, from the others). */
	qLimit: number;
	wafers: PhaseOneWafer[];
	/** Indices of the flagged wafers. */
	flagged: number[];
	/** n · α: how many wafers an in-control golden set has flagged by chance, on average. */
	expectedFalseFlags: number;
	/** How the Q values were obtained: leave-one-out or K-fold. */
	qSource: string;
}

const fmt = (v: number) => (Math.abs(v) >= 1000 ? v.toExponential(3) : v.toPrecision(4));

/**
 * Screen a golden set for outliers before its baseline is approved (Phase I).
 *
 * Formula: each wafer's in-sample T² against {@link phaseOneT2Limit} at α/2; its out-of-sample Q
 * (from the cross-validation behind the model's limits) against a cube-root prediction limit at α/2
 * ({@link cubeRootPredictionLimit}) fitted to the other golden wafers' out-of-sample Q — never its
 * own, so an outlier cannot widen its own limit — first to all the others, then once more without
 * the others the first pass flagged, so two outliers cannot hide each other.
 * A wafer beyond either limit is proposed for removal with the reason; with α/2 each (Bonferroni) an
 * in-control wafer is flagged with probability ≤ α, so about n·α wafers of a clean golden set are
 * flagged by chance — the screen says so rather than pretending every flag is a fault.
 * Source: Tracy, Young & Mason (1992) J. Quality Technology 24:88 (Phase I T²); leave-one-out
 * residuals for Phase I: Wold (1978) Technometrics 20:397; Phase I practice (retrospective limits,
 * removal of assignable causes): Montgomery (2009) "Introduction to Statistical Quality Control",
 * §11.3 (common practice).
 *
 * @param rows the golden rows the model was fitted on
 * @param model the fitted model
 * @param cvQ out-of-sample Q of each row, in row order (from fitBaselineDetailed)
 * @param options `alpha`: per-wafer flag probability (default the model's α); `folds` of cvQ
 * @returns the screening
 * @throws MonitoringInputError when cvQ does not have one value per row
 * @example phaseOne(rows, model, cv.q).flagged // → [7] when wafer 7 is an outlier
 */
export function phaseOne(
	rows: readonly Row[],
	model: BaselineModel,
	cvQ: ArrayLike<number>,
	options: { alpha?: number; folds?: number } = {}
): PhaseOneResult {
	const n = rows.length;
	if (cvQ.length !== n) throw new MonitoringInputError(`Phase I needs one out-of-sample Q per golden wafer: ${cvQ.length} for ${n}`);
	const alpha = options.alpha ?? model.alpha;
	const half = alpha / 2;
	const t2Limit = phaseOneT2Limit(n, model.k, half);
	const self = scoreBatch(model, rows);
	const qs = Array.from(cvQ);
	const limitOf = (keep: number[]) => (keep.length >= 3 ? cubeRootPredictionLimit(cubeRootLaw(keep.map((i) => qs[i])), half) : Infinity);
	const all = qs.map((_, i) => i);
	// Each wafer against the others only (a wafer never widens its own limit); then once more with the
	// first pass's outliers left out of the others, so two outliers cannot hide each other.
	const firstFlags = new Set(all.filter((i) => qs[i] > limitOf(all.filter((j) => j !== i))));
	const ownLimit = all.map((i) => limitOf(all.filter((j) => j !== i && !firstFlags.has(j))));
	const qFlag = all.map((i) => qs[i] > ownLimit[i]);
	const qLimit = limitOf(all.filter((i) => !qFlag[i]));
	const wafers: PhaseOneWafer[] = all.map((i) => {
		const reasons: string[] = [];
		const t2 = self.t2[i];
		if (t2 > t2Limit)
			reasons.push(`T² ${fmt(t2)} above the golden-set limit ${fmt(t2Limit)}: far from the others along the directions they share`);
		if (qFlag[i])
			reasons.push(`Q ${fmt(qs[i])} (scored by a model fitted without it) above ${fmt(ownLimit[i])}, the limit from the other golden wafers: it varies in a way they do not`);
		return { index: i, t2, q: qs[i], qLimit: ownLimit[i], flagged: reasons.length > 0, reasons };
	});
	const folds = options.folds ?? n;
	return {
		alpha,
		t2Limit,
		qLimit,
		wafers,
		flagged: wafers.filter((w) => w.flagged).map((w) => w.index),
		expectedFalseFlags: n * alpha,
		qSource: folds >= n ? 'leave-one-out' : `${folds}-fold cross-validation`
	};
}

/** What the golden-set warnings look at. */
export interface GoldenSetFacts {
	n: number;
	k: number;
	p: number;
	/** Lot of each golden wafer. */
	lots: readonly string[];
	/** Processing times (ms) of the golden wafers. */
	times: readonly number[];
	/** How the limits were set ('cross-validated' or 'theory'). */
	limitCalibration?: string;
	/** Number of wafers Phase I flagged and its expected false count. */
	flagged?: number;
	expectedFalseFlags?: number;
}

/** Fewest golden wafers advised for k components: max(20, 5k). */
export function advisedGoldenWafers(k: number): number {
	return Math.max(20, 5 * k);
}

/** Shortest span of a golden set without a warning (see {@link goldenSetWarnings}). */
export const MIN_SPAN_MS = 2 * 3_600_000;

/**
 * Warnings an engineer should read before approving a golden set.
 *
 * Rules (common practice; thresholds ours): fewer wafers than max(20, 5k) (Jackson 1991 §1.7 and
 * Montgomery 2009 §11.3 advise at least 20–25 samples for Phase I; 5 per component is our margin for
 * the covariance); all wafers from one or two lots (lot-to-lot variation missing, common practice);
 * a span under 2 hours (wafers run back to back: no idle period or shift change in the model; at a
 * real chamber's 15–30 wafers an hour a requalification set of 30–60 wafers after a wet clean spans
 * 1–4 h, so a day-long threshold would warn on every such set and keep it out of "approve all" — the
 * lot rule carries the diversity check there); k = 1 with 20 or more
 * features (one direction cannot separate causes; T² contributions all equal T², so no ranking);
 * theory limits because cross-validation was not possible; more Phase I flags than twice the
 * expected false count plus one.
 *
 * @param f the facts of the golden set
 * @returns warnings in plain words (empty when none)
 * @throws nothing
 * @example goldenSetWarnings({ n: 12, k: 3, p: 40, lots: ['A'], times: [0, 1] }).length // → 3
 */
export function goldenSetWarnings(f: GoldenSetFacts): string[] {
	const out: string[] = [];
	const advised = advisedGoldenWafers(f.k);
	if (f.n < advised)
		out.push(
			`Only ${f.n} golden wafers for ${f.k} component${f.k === 1 ? '' : 's'}: at least max(20, 5k) = ${advised} are advised. The limits allow for the small set (they are wider), but the model's directions are uncertain.`
		);
	const lots = new Set(f.lots);
	if (lots.size <= 2)
		out.push(
			`All golden wafers come from ${lots.size === 1 ? 'one lot' : 'two lots'} (${[...lots].join(', ')}): lot-to-lot variation is not in the model, so the next lots may look unusual. Add wafers from more lots.`
		);
	if (f.times.length >= 2) {
		const span = Math.max(...f.times) - Math.min(...f.times);
		if (span < MIN_SPAN_MS)
			out.push(
				`The golden wafers span only ${(span / 3_600_000).toFixed(1)} hours: they ran back to back, so idle periods and shift changes are not in the model. Prefer wafers spread over several hours and lots.`
			);
	}
	if (f.k === 1 && f.p >= 20)
		out.push(
			`One component for ${f.p} features: the model plane is a single direction, so T² cannot tell causes apart and T² contributions are not ranked (every feature's equals T²). Consider fixing k by hand if the golden wafers vary in more ways.`
		);
	if (f.limitCalibration === 'theory')
		out.push('The limits come from large-sample formulas (cross-validation was not possible with these wafers): expect more false alarms than α promises.');
	if (f.flagged !== undefined && f.expectedFalseFlags !== undefined && f.flagged > 2 * f.expectedFalseFlags + 1)
		out.push(
			`${f.flagged} golden wafers are flagged where about ${f.expectedFalseFlags.toFixed(1)} would be by chance: look at them before approving, and rebuild without the ones that have a cause.`
		);
	return out;
}
