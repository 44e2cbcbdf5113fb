/**
 * Alarm rules and the alarm lifecycle.
 *
 * Rules (admin policy, `alarm_policy`): `single` — one wafer-step above the α limit in T² or Q;
 * `run` — k of the last m wafer-steps above a warning limit (adapted from the Western Electric
 * Statistical Quality Control Handbook, 1956: "2 of 3 beyond 2σ"); `ewma` — the EWMA of the T² or Q
 * ratio above its upper limit (Roberts 1959; Lucas & Saccucci 1990), its in-control variance widened
 * by the wafers' autocorrelation (Zhang 1998, see {@link ewmaChartSd}); `fleet` — the chamber sits apart
 * from the fleet (modified z-score, Iglewicz & Hoaglin 1993).
 *
 * One live alarm (open or acknowledged) per chamber × recipe step × rule: while the condition lasts the
 * alarm is extended (last wafer, count, worst ratio), never duplicated. Every state change is an
 * append-only `alarm_actions` row.
 */
import type { Knex } from 'knex';
import { ewma, ewmaInflation, type EwmaInflation } from '../monitoring/index.ts';
import type { EwmaReference, EwmaStatReference } from './baselines.ts';
import type { AlarmPolicy } from './settings.ts';
import { now } from './time.ts';

export type AlarmRule = 'single' | 'run' | 'ewma' | 'fleet';
export const RULE_LABELS: Record<AlarmRule, string> = {
	single: 'Wafer beyond limit',
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

export interface BaselineLimits {
	id: number;
	t2WarningLimit: number;
	qWarningLimit: number;
	/** In-control level of T²/limit and Q/limit (cross-validated golden wafers), for the EWMA. */
	ewmaReference: EwmaReference | null;
}

/**
 * The σ an EWMA chart of one ratio series uses: the golden sd, widened to sd · √F when the baseline
 * kept an ACF (from the consecutive in-control wafers of its training window, or the golden wafers;
 * `n` is the length of that series, see EwmaReference in baselines.ts). F is Zhang's (1998) EWMAST variance factor at the policy's λ, summed
 * over the lags while r_k stays positive, never below 1 (`ewmaInflation`, which says why). Wafers of one lot
 * share incoming film, and the chamber wanders between lots, so successive ratios are positively
 * correlated and the independent-data limits are too tight. Baselines stored before the ACF was
 * kept (no `acf` or no `n`) get F = 1: today's behaviour.
 *
 * @returns the σ for the chart and the factor with how it was reached (null when there is no ACF)
 */
export function ewmaChartSd(ref: EwmaStatReference, n: number | undefined, lambda: number): { sd: number; inflation: EwmaInflation | null } {
	if (!ref.acf || !n) return { sd: ref.sd, inflation: null };
	const inflation = ewmaInflation(lambda, ref.acf, n);
	return { sd: ref.sd * Math.sqrt(inflation.factor), inflation };
}

export interface Violation {
	rule: AlarmRule;
	point: ScoredPoint;
	detail: Record<string, unknown>;
}

/**
 * Evaluate the wafer rules on new points, given the points before them under the same baseline
 * (oldest first; at most ~50 are needed).
 */
export function evaluateRules(history: ScoredPoint[], fresh: ScoredPoint[], limits: BaselineLimits, policy: AlarmPolicy): Violation[] {
	const out: Violation[] = [];
	const all = [...history, ...fresh];
	const offset = history.length;
	const aboveWarning = (p: ScoredPoint) => p.t2 > limits.t2WarningLimit || p.q > limits.qWarningLimit;
	// One EWMA chart per statistic, each against its own in-control level.
	const charts: { stat: 't2' | 'q'; chart: ReturnType<typeof ewma> }[] = [];
	const ref = limits.ewmaReference;
	if (policy.ewmaEnabled && ref) {
		for (const stat of ['t2', 'q'] as const) {
			const m = ref[stat];
			if (!(m.sd > 0) || !Number.isFinite(m.mean)) continue;
			const series = all.map((p) => (stat === 't2' ? p.t2Ratio : p.qRatio));
			const { sd } = ewmaChartSd(m, ref.n, policy.ewmaLambda);
			charts.push({ stat, chart: ewma(series, { lambda: policy.ewmaLambda, L: policy.ewmaL, mean: m.mean, sd }) });
		}
	}
	for (let i = 0; i < fresh.length; i++) {
		const p = fresh[i];
		const idx = offset + i;
		if (policy.singleEnabled && (p.t2Ratio > 1 || p.qRatio > 1))
			out.push({ rule: 'single', point: p, detail: { t2Ratio: p.t2Ratio, qRatio: p.qRatio } });
		if (policy.runEnabled && aboveWarning(p)) {
			const window = all.slice(Math.max(0, idx - policy.runM + 1), idx + 1);
			const count = window.filter(aboveWarning).length;
			if (window.length >= Math.min(policy.runM, policy.runK) && count >= policy.runK)
				out.push({ rule: 'run', point: p, detail: { above: count, of: window.length } });
		}
		const over = charts.filter(({ chart }) => chart.values[idx] > chart.upper[idx]);
		if (over.length)
			out.push({
				rule: 'ewma',
				point: p,
				detail: Object.fromEntries(over.map(({ stat, chart }) => [stat, { ewma: chart.values[idx], limit: chart.upper[idx] }]))
			});
	}
	return out;
}

/**
 * Open an alarm for a violation, or extend the live one of the same chamber × step × rule.
 * @returns the alarm id and whether it was newly opened
 */
export async function raiseOrExtend(
	trx: Knex.Transaction | Knex,
	a: { chamberId: number; recipeStepId: number; baselineId: number | null; rule: AlarmRule; waferStepId: number | null; at: number; ratio: number; detail: Record<string, unknown> }
): Promise<{ id: number; opened: boolean }> {
	const live = await trx('alarms')
		.where({ chamber_id: a.chamberId, recipe_step_id: a.recipeStepId, rule: a.rule })
		.whereNot('state', 'closed')
		.first('id', 'worst_ratio', 'wafer_count', 'last_seen_at');
	if (live) {
		const patch: Record<string, unknown> = {
			last_seen_at: Math.max(Number(live.last_seen_at), a.at),
			wafer_count: Number(live.wafer_count) + 1
		};
		if (a.waferStepId !== null) patch.last_wafer_step_id = a.waferStepId;
		if (a.ratio > Number(live.worst_ratio ?? -Infinity)) {
			patch.worst_ratio = a.ratio;
			if (a.waferStepId !== null) patch.worst_wafer_step_id = a.waferStepId;
			patch.detail_json = JSON.stringify(a.detail);
		}
		await trx('alarms').where({ id: live.id }).update(patch);
		return { id: live.id, opened: false };
	}
	const [row] = await trx('alarms')
		.insert({
			chamber_id: a.chamberId,
			recipe_step_id: a.recipeStepId,
			rule: a.rule,
			severity: RULE_SEVERITY[a.rule],
			state: 'open',
			baseline_id: a.baselineId,
			opened_at: a.at,
			last_seen_at: a.at,
			first_wafer_step_id: a.waferStepId,
			last_wafer_step_id: a.waferStepId,
			worst_wafer_step_id: a.waferStepId,
			worst_ratio: a.ratio,
			wafer_count: 1,
			detail_json: JSON.stringify(a.detail)
		})
		.returning('id');
	const id = typeof row === 'object' ? row.id : row;
	await trx('alarm_actions').insert({ alarm_id: id, at: now(), user_id: null, action: 'opened', from_state: null, to_state: 'open' });
	return { id, opened: true };
}

/**
 * The violations of one rule on one chamber × step, in time order, applied in two statements: the
 * first opens the alarm (or extends the live one), the rest extend it in one update. Same result as
 * calling {@link raiseOrExtend} for each, without a read and a write per wafer.
 */
export async function raiseOrExtendAll(
	trx: Knex.Transaction | Knex,
	base: { chamberId: number; recipeStepId: number; baselineId: number | null; rule: AlarmRule },
	violations: Violation[]
): Promise<{ id: number; opened: boolean } | null> {
	if (violations.length === 0) return null;
	const [first, ...rest] = violations;
	const r = await raiseOrExtend(trx, {
		...base,
		waferStepId: first.point.waferStepId,
		at: first.point.processedAt,
		ratio: first.point.worstRatio,
		detail: first.detail
	});
	if (rest.length === 0) return r;
	const cur = await trx('alarms').where({ id: r.id }).first('worst_ratio', 'wafer_count', 'last_seen_at');
	const last = rest[rest.length - 1].point;
	let worst: Violation | null = null;
	for (const v of rest) if (v.point.worstRatio > Number(cur.worst_ratio ?? -Infinity) && (!worst || v.point.worstRatio > worst.point.worstRatio)) worst = v;
	const patch: Record<string, unknown> = {
		last_seen_at: Math.max(Number(cur.last_seen_at), last.processedAt),
		last_wafer_step_id: last.waferStepId,
		wafer_count: Number(cur.wafer_count) + rest.length
	};
	if (worst) {
		patch.worst_ratio = worst.point.worstRatio;
		patch.worst_wafer_step_id = worst.point.waferStepId;
		patch.detail_json = JSON.stringify(worst.detail);
	}
	await trx('alarms').where({ id: r.id }).update(patch);
	return r;
}

export const DISPOSITIONS = {
	continue: 'Continue production',
	hold_recommended: 'Hold recommended',
	requalify: 'Requalify the chamber'
} as const;
export type Disposition = keyof typeof DISPOSITIONS;

export class AlarmError extends Error {
	constructor(
		message: string,
		readonly field?: string
	) {
		super(message);
	}
}

/**
 * Acknowledge one or more alarms with a cause code, a disposition (a recommendation to the fab's own
 * procedure, never an action on the tool) and a comment. All or nothing: one bad alarm id refuses the
 * whole request.
 */
export async function acknowledgeAlarms(
	k: Knex,
	a: { alarmIds: number[]; userId: string; causeCode: string; disposition: string; comment: string }
): Promise<{ acknowledged: number[] }> {
	if (a.alarmIds.length === 0) throw new AlarmError('Choose at least one alarm.', 'alarmIds');
	if (!Object.hasOwn(DISPOSITIONS, a.disposition)) throw new AlarmError('Choose a disposition.', 'disposition');
	const comment = a.comment.trim();
	if (comment.length > 2000) throw new AlarmError('Keep the comment under 2,000 characters.', 'comment');
	return k.transaction(async (trx) => {
		const cause = await trx('cause_codes').where({ code: a.causeCode, active: true }).first('id');
		if (!cause) throw new AlarmError('Choose a cause code from the list.', 'causeCode');
		const alarms = await trx('alarms').whereIn('id', a.alarmIds).select('id', 'state');
		const missing = a.alarmIds.filter((id) => !alarms.some((x) => x.id === id));
		if (missing.length) throw new AlarmError(`No alarm ${missing.join(', ')}.`, 'alarmIds');
		const closed = alarms.filter((x) => x.state === 'closed');
		if (closed.length) throw new AlarmError(`Alarm ${closed.map((x) => x.id).join(', ')} is closed already.`, 'alarmIds');
		const t = now();
		for (const al of alarms) {
			await trx('alarms').where({ id: al.id }).update({ state: 'acknowledged', acknowledged_at: t });
			await trx('alarm_actions').insert({
				alarm_id: al.id,
				at: t,
				user_id: a.userId,
				action: 'acknowledged',
				from_state: al.state,
				to_state: 'acknowledged',
				cause_code_id: cause.id,
				disposition: a.disposition,
				comment: comment || null
			});
		}
		return { acknowledged: alarms.map((x) => x.id) };
	});
}

/** Close an alarm (the condition is resolved); a new violation afterwards opens a new alarm. */
export async function closeAlarm(k: Knex, a: { alarmId: number; userId: string; comment: string }): Promise<void> {
	await k.transaction(async (trx) => {
		const al = await trx('alarms').where({ id: a.alarmId }).first('id', 'state');
		if (!al) throw new AlarmError(`No alarm ${a.alarmId}.`, 'alarmId');
		if (al.state === 'closed') throw new AlarmError('The alarm is closed already.', 'alarmId');
		const t = now();
		await trx('alarms').where({ id: al.id }).update({ state: 'closed', closed_at: t });
		await trx('alarm_actions').insert({
			alarm_id: al.id,
			at: t,
			user_id: a.userId,
			action: 'closed',
			from_state: al.state,
			to_state: 'closed',
			comment: a.comment.trim().slice(0, 2000) || null
		});
	});
}
