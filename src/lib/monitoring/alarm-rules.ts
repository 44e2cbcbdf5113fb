import { driftChart, driftChartSd, ewmaLimitForArl, scoreScale, upperNormal, type DriftReference, type ShiftedChiSquare } from './drift';

/**
 * Lockstep's wafer alarm rules, designed around one number: B, the false alarms a chamber × recipe
 * step may raise per 10,000 in-control wafer-steps (admin policy, default 2). Every wafer's T²/limit
 * and Q/limit ratio is shown on every chart and table; what opens an alarm is gross or persistent
 * evidence:
 *
 * - `single` (gross wafer): one wafer whose normal score is beyond z_g, the score exceeded in control
 *   with probability B/4 ÷ 2 statistics (at B = 2: 2.5e-5, z_g ≈ 4.06; for a χ²_3-shaped ratio with
 *   a calibrated 1 % limit, a ratio of about 2.2).
 * - `run` (k of m): k of the last m wafers beyond the warning score z_w, z_w chosen so that a run
 *   completes in control at rate B/4 ÷ 2 per statistic (independent wafers, binomial count).
 *   Adapted from the Western Electric handbook's "2 of 3 beyond 2σ" zone tests (1956).
 * - `ewma` (drift): a one-sided EWMA of the normal scores above centre + L·σ√(λ/(2−λ)), with L solved
 *   for an in-control ARL of 1/(B/4) wafers per statistic (Brook & Evans 1972 Markov chain), scores
 *   capped at 3 (DRIFT_SCORE_CAP), σ widened by Zhang's (1998) factor for correlated wafers.
 *
 * Budget: B/4 + B/4 + B/2 = B (a slight overcount, since the rules' signals overlap). The scores are
 * Wilson–Hilferty normal scores of the ratios under a shifted χ² fitted to their in-control mean, sd
 * and skewness out of sample (drift.ts shiftedChiSquare, scoreScale).
 */

export type AlarmRule = 'single' | 'run' | 'ewma' | 'fleet';
export type WaferRule = Exclude<AlarmRule, 'fleet'>;
export const RULE_LABELS: Record<AlarmRule, string> = {
	single: 'Wafer far beyond limit',
	run: 'Run above warning',
	ewma: 'Smoothed drift',
	fleet: 'Apart from fleet'
};
export const RULE_SEVERITY: Record<AlarmRule, 'alarm' | 'warning'> = {
	single: 'alarm',
	run: 'warning',
	ewma: 'warning',
	fleet: 'warning'
};

/** The policy fields the rules read (server/settings.ts AlarmPolicy has them). */
export interface RulePolicy {
	/** B: false alarms per chamber × step per 10,000 in-control wafer-steps, all rules together. */
	falseAlarmsPer10k: number;
	singleEnabled: boolean;
	runEnabled: boolean;
	runK: number;
	runM: number;
	ewmaEnabled: boolean;
	ewmaLambda: number;
}

/**
 * The rules are designed for B / TAIL_MARGIN. Why: the in-control law of each ratio is fitted to a few
 * hundred out-of-sample wafers (three moments), and the rules live in its far tail (2.5e-5 per wafer
 * for the gross rule at B = 2) where no fitted law is exact: on generated fleets (3 latent factors,
 * p = 12 and 40, 100 golden wafers, lot-to-lot offsets) the rules designed for B raised 1.4–2× B in
 * the engine alone and ≈ 2.7× B end to end (gross Q beyond its fitted tail, the T² drift chart under
 * lot-to-lot correlation). A margin of 3 brings the measured total within B (figures in the
 * monitoring README, "Alarm rules", with the commands). It costs little power: the gross score moves
 * from 4.06 to 4.31 and the drift limit L from 3.78 to 4.03 at B = 2.
 */
export const TAIL_MARGIN = 3;

/** Shares of the budget B (they sum to 1). */
export const BUDGET_SHARES = { single: 0.25, run: 0.25, ewma: 0.5 } as const;

/** What the budget makes of each rule. */
export interface RuleDesign {
	/** In-control probability per wafer and statistic that the gross rule fires. */
	grossProbability: number;
	grossScore: number;
	/** In-control probability per wafer and statistic of a score beyond the warning level. */
	warningProbability: number;
	warningScore: number;
	/** Design in-control ARL of each drift chart (wafers) and its L. */
	driftArl: number;
	driftL: number;
}

/**
 * Probability P(X ≥ j) of a binomial(n, p) count.
 * @example binomialAtLeast(4, 0.5, 2) // → 11/16
 */
export function binomialAtLeast(n: number, p: number, j: number): number {
	let s = 0;
	let c = 1; // C(n, i)
	for (let i = 0; i <= n; i++) {
		if (i >= j) s += c * p ** i * (1 - p) ** (n - i);
		c = (c * (n - i)) / (i + 1);
	}
	return s;
}

/**
 * The per-wafer warning probability p at which a "k of the last m" run completes in control at
 * `rate` per wafer: the wafer beyond the warning level (p) with at least k − 1 of the m − 1 before
 * it (binomial), p · P(Bin(m − 1, p) ≥ k − 1) = rate, solved by bisection (monotone in p).
 * Independent wafers assumed; correlated wafers complete runs more often (measured end to end).
 *
 * @param k wafers beyond the level (2 ≤ k ≤ m)
 * @param m window
 * @param rate target completion rate per wafer (0 < rate < 1)
 * @returns p
 * @throws RangeError on bad k, m or rate
 * @example runWarningProbability(3, 5, 2.5e-5) // → ≈ 0.0163 (6p³ ≈ 2.5e-5 for small p)
 */
export function runWarningProbability(k: number, m: number, rate: number): number {
	if (!(Number.isInteger(k) && Number.isInteger(m) && k >= 2 && m >= k)) throw new RangeError(`need integers 2 ≤ k ≤ m, got k = ${k}, m = ${m}`);
	if (!(rate > 0 && rate < 1)) throw new RangeError(`the rate must lie in (0, 1), got ${rate}`);
	let lo = 0;
	let hi = 1;
	for (let i = 0; i < 80; i++) {
		const p = (lo + hi) / 2;
		if (p * binomialAtLeast(m - 1, p, k - 1) < rate) lo = p;
		else hi = p;
	}
	return (lo + hi) / 2;
}

/**
 * The thresholds the budget gives each rule (see the module comment), designed for B / margin.
 * @param policy B, run k and m, λ
 * @param margin design margin for the fitted law's far tail (default {@link TAIL_MARGIN}; 1 for none)
 * @returns the design
 * @throws RangeError on a B outside (0, 1,000]
 * @example designRules({ falseAlarmsPer10k: 2, runK: 3, runM: 5, ewmaLambda: 0.2, ... }, 1).driftArl // → 20,000
 */
export function designRules(policy: RulePolicy, margin = TAIL_MARGIN): RuleDesign {
	if (!(policy.falseAlarmsPer10k > 0 && policy.falseAlarmsPer10k <= 1000))
		throw new RangeError(`false alarms per 10,000 must lie in (0, 1,000], got ${policy.falseAlarmsPer10k}`);
	const B = policy.falseAlarmsPer10k / 10_000 / margin;
	const perStat = (share: number) => (share * B) / 2;
	const grossProbability = perStat(BUDGET_SHARES.single);
	const warningProbability = runWarningProbability(policy.runK, policy.runM, perStat(BUDGET_SHARES.run));
	const driftArl = 1 / perStat(BUDGET_SHARES.ewma);
	return {
		grossProbability,
		grossScore: upperNormal(grossProbability),
		warningProbability,
		warningScore: upperNormal(warningProbability),
		driftArl,
		driftL: ewmaLimitForArl(policy.ewmaLambda, driftArl)
	};
}

/** One scored wafer-step as the rules see it. */
export interface ScoredPoint {
	waferStepId: number;
	processedAt: number;
	t2: number;
	q: number;
	t2Ratio: number;
	qRatio: number;
	worstRatio: number;
	/** within the seasoning window after a wet clean (rules hold their alarms; rollups count it apart) */
	seasoning?: boolean;
}

/** What the rules need to know of the baseline a chamber × step is scored against. */
export interface RuleBaseline {
	/** In-control law of each ratio, a shifted χ² fitted to its out-of-sample moments ({@link shiftedChiSquare}). */
	shape: { t2: ShiftedChiSquare; q: ShiftedChiSquare };
	/** The ratios' ACF for the drift charts' widening; null: the drift rule is off for this baseline. */
	drift: { t2?: DriftReference; q?: DriftReference; n?: number } | null;
}

export interface Violation {
	rule: WaferRule;
	point: ScoredPoint;
	detail: Record<string, unknown>;
	/** Leading contributors of the wafer, strongest first (filled in by the caller, which has the model). */
	leading?: string[];
}

const STATS = ['t2', 'q'] as const;
const ratioOf = (p: ScoredPoint, s: 't2' | 'q') => (s === 't2' ? p.t2Ratio : p.qRatio);
const round = (x: number) => Math.round(x * 1000) / 1000;

/**
 * Evaluate the wafer rules on new points, given the judged points before them under the same
 * baseline (oldest first; about 50 are enough for λ = 0.2: 0.8^50 ≈ 1e-5).
 *
 * @param history earlier points, oldest first
 * @param fresh new points, oldest first
 * @param baseline α, shapes and ACF of the baseline
 * @param policy the alarm policy
 * @param design thresholds (default: {@link designRules} of the policy)
 * @returns the violations, in the order of `fresh`, rule by rule
 */
export function evaluateRules(history: ScoredPoint[], fresh: ScoredPoint[], baseline: RuleBaseline, policy: RulePolicy, design = designRules(policy)): Violation[] {
	const out: Violation[] = [];
	const all = [...history, ...fresh];
	const offset = history.length;
	// Each ratio becomes a normal score under its in-control law (fitted to the golden and
	// consecutive in-control wafers scored out of sample, not taken from the limit's nominal α): the
	// rules then hold their budget whether or not the limit itself is calibrated for this golden set.
	const scales = { t2: scoreScale(baseline.shape.t2), q: scoreScale(baseline.shape.q) };
	const scores = { t2: all.map((p) => scales.t2.score(p.t2Ratio)), q: all.map((p) => scales.q.score(p.qRatio)) };
	const charts: { stat: 't2' | 'q'; chart: ReturnType<typeof driftChart> }[] = [];
	if (policy.ewmaEnabled && baseline.drift) {
		for (const stat of STATS) {
			const { sd } = driftChartSd(baseline.drift[stat], baseline.drift.n, policy.ewmaLambda);
			charts.push({ stat, chart: driftChart(scores[stat], { lambda: policy.ewmaLambda, L: design.driftL, sd }) });
		}
	}
	// Each statistic runs its own count (the design gives each statistic half of the run rule's share).
	const beyond = (stat: 't2' | 'q', idx: number) => scores[stat][idx] > design.warningScore;
	for (let i = 0; i < fresh.length; i++) {
		const p = fresh[i];
		const idx = offset + i;
		if (policy.singleEnabled) {
			const gross = STATS.filter((s) => scores[s][idx] > design.grossScore);
			if (gross.length)
				out.push({
					rule: 'single',
					point: p,
					detail: { t2Ratio: p.t2Ratio, qRatio: p.qRatio, beyond: gross, grossRatio: Object.fromEntries(gross.map((s) => [s, round(ratioOf(p, s))])), grossScore: round(design.grossScore) }
				});
		}
		if (policy.runEnabled) {
			const from = Math.max(0, idx - policy.runM + 1);
			const runs = STATS.filter((stat) => beyond(stat, idx)).map((stat) => {
				let count = 0;
				for (let j = from; j <= idx; j++) if (beyond(stat, j)) count++;
				return { stat, count };
			});
			const complete = runs.filter((r) => r.count >= policy.runK);
			if (complete.length)
				out.push({ rule: 'run', point: p, detail: { stat: complete.map((r) => r.stat), above: Math.max(...complete.map((r) => r.count)), of: idx - from + 1, warningScore: round(design.warningScore) } });
		}
		const over = charts.filter(({ chart }) => chart.values[idx] > chart.upper[idx]);
		if (over.length)
			out.push({
				rule: 'ewma',
				point: p,
				detail: Object.fromEntries(over.map(({ stat, chart }) => [stat, { ewma: round(chart.values[idx]), limit: round(chart.upper[idx]) }]))
			});
	}
	return out;
}

/**
 * Which fresh points are in control for the episode rule: within both limits (ratio ≤ 1) and part
 * of no violation. A run of such wafers ends (clears) a live alarm.
 * @example quietPoints([{ worstRatio: 0.5, waferStepId: 1 }], []) // → [true]
 */
export function quietPoints(fresh: Pick<ScoredPoint, 'waferStepId' | 'worstRatio'>[], violations: Pick<Violation, 'point'>[]): boolean[] {
	const loud = new Set(violations.map((v) => v.point.waferStepId));
	return fresh.map((p) => p.worstRatio <= 1 && !loud.has(p.waferStepId));
}
