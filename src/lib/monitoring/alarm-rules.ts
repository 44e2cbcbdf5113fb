import { driftChart, driftChartSd, driftLevel, ewmaLimitForArl, ratioScale, upperNormal, type DriftReference } from './drift';

/**
 * Lockstep's wafer alarm rules, designed around one number: B, the false alarms a chamber × recipe
 * step may raise per 10,000 in-control wafer-steps (admin policy, default 2). Every wafer's T²/limit
 * and Q/limit ratio is shown on every chart and table; what opens an alarm is gross or persistent
 * evidence:
 *
 * - `single` (gross wafer): one wafer whose normal score is beyond z_g, the score exceeded in control
 *   with probability B/4 ÷ 2 statistics (at B = 2: 2.5e-5, z_g ≈ 4.06; a ratio of about 2.2–2.6
 *   for a χ²-shaped statistic at α = 1 %).
 * - `run` (k of m): k of the last m wafers beyond the warning score z_w, z_w chosen so that a run
 *   completes in control at rate B/4 ÷ 2 per statistic (independent wafers, binomial count).
 *   Adapted from the Western Electric handbook's "2 of 3 beyond 2σ" zone tests (1956).
 * - `ewma` (drift): a one-sided EWMA of the normal scores above centre + L·σ√(λ/(2−λ)), with L solved
 *   for an in-control ARL of 1/(B/4) wafers per statistic (Brook & Evans 1972 Markov chain), centre
 *   and σ from the cross-validated golden ratios (driftLevel), σ widened by Zhang's (1998) factor for
 *   correlated wafers.
 *
 * Budget: B/4 + B/4 + B/2 = B (a slight overcount, since the rules' signals overlap). The scores are
 * Wilson–Hilferty normal scores of the ratios anchored at the limit ({@link ratioScale}).
 */

export type AlarmRule = 'single' | 'run' | 'ewma' | 'fleet';
export type WaferRule = Exclude<AlarmRule, 'fleet'>;
export const RULE_LABELS: Record<AlarmRule, string> = {
	single: 'Wafer far beyond limit',
	run: 'Run beyond warning',
	ewma: 'Drift',
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
 * The thresholds the budget gives each rule (see the module comment).
 * @param policy B, run k and m, λ
 * @returns the design
 * @throws RangeError on a B outside (0, 1,000]
 * @example designRules({ falseAlarmsPer10k: 2, runK: 3, runM: 5, ewmaLambda: 0.2, ... }).driftArl // → 20,000
 */
export function designRules(policy: RulePolicy): RuleDesign {
	const B = policy.falseAlarmsPer10k / 10_000;
	if (!(B > 0 && B <= 0.1)) throw new RangeError(`false alarms per 10,000 must lie in (0, 1,000], got ${policy.falseAlarmsPer10k}`);
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
	/** α of the T² and Q limits (each statistic's own). */
	alpha: number;
	/** Matched χ² shape of each ratio ({@link ratioShape}). */
	shape: { t2: number; q: number };
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
	const scales = { t2: ratioScale(baseline.shape.t2, baseline.alpha), q: ratioScale(baseline.shape.q, baseline.alpha) };
	// Standardise each statistic's scores on its in-control level out of sample (driftLevel of the
	// cross-validated golden mean ratio): centre 0 and spread 1 when the limit is calibrated; when it
	// is not (a limit too tight for the golden set's size), every rule judges against what the golden
	// wafers showed out of sample rather than against the limit's nominal α.
	const level = (stat: 't2' | 'q') => {
		const ref = baseline.drift?.[stat];
		return ref && ref.mean > 0 ? driftLevel(ref.mean, baseline.shape[stat], baseline.alpha) : { centre: 0, spread: 1 };
	};
	const levels = { t2: level('t2'), q: level('q') };
	const standard = (stat: 't2' | 'q') => (p: ScoredPoint) => (scales[stat].score(ratioOf(p, stat)) - levels[stat].centre) / levels[stat].spread;
	const scores = { t2: all.map(standard('t2')), q: all.map(standard('q')) };
	const charts: { stat: 't2' | 'q'; chart: ReturnType<typeof driftChart> }[] = [];
	if (policy.ewmaEnabled && baseline.drift) {
		for (const stat of STATS) {
			const ref = baseline.drift[stat];
			if (!ref || !(ref.mean > 0)) continue;
			const { sd } = driftChartSd(ref, baseline.drift.n, policy.ewmaLambda);
			charts.push({ stat, chart: driftChart(scores[stat], { lambda: policy.ewmaLambda, L: design.driftL, sd }) });
		}
	}
	const beyondWarning = (idx: number) => scores.t2[idx] > design.warningScore || scores.q[idx] > design.warningScore;
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
		if (policy.runEnabled && beyondWarning(idx)) {
			const from = Math.max(0, idx - policy.runM + 1);
			let count = 0;
			for (let j = from; j <= idx; j++) if (beyondWarning(j)) count++;
			if (count >= policy.runK) out.push({ rule: 'run', point: p, detail: { above: count, of: idx - from + 1, warningScore: round(design.warningScore) } });
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
