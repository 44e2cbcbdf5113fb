/**
 * The alarm lifecycle (I/O). The rules themselves are pure and live in
 * `src/lib/monitoring/alarm-rules.ts` (gross wafer, k of m, drift on normal scores, all designed
 * around the false-alarm budget); `fleet` alarms come from fleet matching.
 *
 * Alarms are episodes:
 * - one live alarm (open or acknowledged) per chamber × recipe step × rule; while violations go on,
 *   it is extended (latest wafer, count, worst ratio and its leading contributors);
 * - it ends by itself, state `cleared`, after `clearAfter` consecutive in-control wafers (policy;
 *   {@link settleEpisodes}); a violation after that opens a new alarm;
 * - an acknowledged alarm never absorbs a later fault: a violation after an acknowledgement whose
 *   cause is a false alarm, or one that is materially worse (worst ratio ≥ `reopenFactor` × the ratio
 *   at acknowledgement, or leading contributors other than those acknowledged), clears it and opens a
 *   new alarm that supersedes it; both carry the reason in their `alarm_actions` rows.
 * Every state change is an append-only `alarm_actions` row.
 */
import type { Knex } from 'knex';
import { RULE_SEVERITY, type AlarmRule, type Violation } from '../monitoring/alarm-rules.ts';
import { now } from './time.ts';

export {
	RULE_LABELS,
	RULE_SEVERITY,
	evaluateRules,
	quietPoints,
	designRules,
	type AlarmRule,
	type ScoredPoint,
	type Violation,
	type RuleBaseline
} from '../monitoring/alarm-rules.ts';

/** States in which an alarm is live (takes new violations, counts as "open" work). */
export const LIVE_STATES = ['open', 'acknowledged'] as const;
export type AlarmState = 'open' | 'acknowledged' | 'cleared' | 'closed';
export const STATE_LABELS: Record<AlarmState, string> = {
	open: 'Open',
	acknowledged: 'Acknowledged',
	cleared: 'Cleared (back in control)',
	closed: 'Closed'
};

/** How the lifecycle judges acknowledged alarms (alarm policy). */
export interface EpisodePolicy {
	reopenFactor: number;
}
const DEFAULT_EPISODE: EpisodePolicy = { reopenFactor: 3 };

/** One violation as the lifecycle records it. */
export interface RaiseInput {
	chamberId: number;
	recipeStepId: number;
	baselineId: number | null;
	rule: AlarmRule;
	waferStepId: number | null;
	at: number;
	ratio: number;
	detail: Record<string, unknown>;
	/** Leading contributors of this wafer, strongest first (features), when known. */
	leading?: string[];
}

interface LiveRow {
	id: number;
	state: 'open' | 'acknowledged';
	worst_ratio: number | null;
	wafer_count: number;
	last_seen_at: number;
	acknowledged_at: number | null;
	ack_ratio: number | null;
	ack_leading_json: string | null;
}

const parseList = (s: string | null): string[] => {
	if (!s) return [];
	try {
		const v = JSON.parse(s);
		return Array.isArray(v) ? v.map(String) : [];
	} catch {
		return [];
	}
};
const fmt = (x: number) => (x >= 100 ? x.toFixed(0) : x >= 10 ? x.toFixed(1) : x.toFixed(2));

/**
 * Why a violation must not be absorbed by an acknowledged alarm, or null when it may.
 * Pure apart from the cause lookup, which the caller passes in.
 */
export function supersedeReason(
	live: Pick<LiveRow, 'state' | 'acknowledged_at' | 'ack_ratio' | 'ack_leading_json'>,
	v: Pick<RaiseInput, 'at' | 'ratio' | 'leading'>,
	ackCause: { code: string; category: string } | null,
	policy: EpisodePolicy = DEFAULT_EPISODE
): string | null {
	if (live.state !== 'acknowledged') return null;
	// Any violation scored after the acknowledgement counts, whatever its process time: evidence the
	// engineer had not seen when calling the episode a false alarm.
	if (ackCause?.category === 'false_alarm')
		return `acknowledged as a false alarm (${ackCause.code}); a violation after that acknowledgement is a new episode`;
	const ackRatio = live.ack_ratio === null ? null : Number(live.ack_ratio);
	if (ackRatio !== null && ackRatio > 0 && v.ratio >= policy.reopenFactor * ackRatio)
		return `materially worse: worst ratio ${fmt(v.ratio)} is ≥ ${policy.reopenFactor}× the ${fmt(ackRatio)} at acknowledgement`;
	const acked = parseList(live.ack_leading_json).slice(0, 5);
	const lead = (v.leading ?? []).slice(0, 2);
	if (acked.length >= 2 && lead.length === 2 && v.ratio > 1 && lead.every((f) => !acked.includes(f)))
		return `different leading contributors: now ${lead.join(', ')}; at acknowledgement ${acked.slice(0, 3).join(', ')}`;
	return null;
}

async function liveAlarm(trx: Knex.Transaction | Knex, chamberId: number, recipeStepId: number, rule: AlarmRule): Promise<LiveRow | undefined> {
	return trx('alarms')
		.where({ chamber_id: chamberId, recipe_step_id: recipeStepId, rule })
		.whereIn('state', LIVE_STATES)
		.first('id', 'state', 'worst_ratio', 'wafer_count', 'last_seen_at', 'acknowledged_at', 'ack_ratio', 'ack_leading_json');
}

async function ackCauseOf(trx: Knex.Transaction | Knex, alarmId: number): Promise<{ code: string; category: string } | null> {
	const r = await trx('alarm_actions as x')
		.join('cause_codes as c', 'c.id', 'x.cause_code_id')
		.where({ 'x.alarm_id': alarmId, 'x.action': 'acknowledged' })
		.orderBy('x.id', 'desc')
		.first('c.code', 'c.category');
	return r ?? null;
}

async function openAlarm(trx: Knex.Transaction | Knex, a: RaiseInput, supersedes: { id: number; reason: string } | null): Promise<number> {
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
			detail_json: JSON.stringify(a.detail),
			leading_json: a.leading ? JSON.stringify(a.leading.slice(0, 5)) : null,
			supersedes_id: supersedes?.id ?? null,
			quiet_count: 0
		})
		.returning('id');
	const id = typeof row === 'object' ? row.id : row;
	await trx('alarm_actions').insert({
		alarm_id: id,
		at: now(),
		user_id: null,
		action: 'opened',
		from_state: null,
		to_state: 'open',
		comment: supersedes ? `Supersedes alarm #${supersedes.id}, ${supersedes.reason}.` : null
	});
	return id;
}

/** End a live alarm by itself (no user): state `cleared`, with the reason in its audit trail. */
async function clear(trx: Knex.Transaction | Knex, id: number, from: string, at: number, comment: string): Promise<void> {
	await trx('alarms').where({ id }).update({ state: 'cleared', cleared_at: at });
	await trx('alarm_actions').insert({ alarm_id: id, at: now(), user_id: null, action: 'cleared', from_state: from, to_state: 'cleared', comment });
}

/**
 * End a live alarm by itself (state `cleared`), e.g. a fleet alarm once its chamber is back within the
 * fleet; the reason goes into its audit trail. Returns false when the alarm is not live.
 */
export async function clearEpisode(trx: Knex.Transaction | Knex, alarmId: number, at: number, reason: string): Promise<boolean> {
	const al = await trx('alarms').where({ id: alarmId }).whereIn('state', LIVE_STATES).first('id', 'state');
	if (!al) return false;
	await clear(trx, al.id, al.state, at, reason);
	return true;
}

/**
 * Open an alarm for a violation, extend the live one of the same chamber × step × rule, or — when
 * the live one is acknowledged and {@link supersedeReason} says so — clear it and open a new one.
 * @returns the alarm id and whether it was newly opened
 */
export async function raiseOrExtend(trx: Knex.Transaction | Knex, a: RaiseInput, policy: EpisodePolicy = DEFAULT_EPISODE): Promise<{ id: number; opened: boolean }> {
	const live = await liveAlarm(trx, a.chamberId, a.recipeStepId, a.rule);
	if (live) {
		const reason = live.state === 'acknowledged' ? supersedeReason(live, a, await ackCauseOf(trx, live.id), policy) : null;
		if (reason) {
			const id = await openAlarmAfter(trx, live.id, a, reason);
			return { id, opened: true };
		}
		await extend(trx, live, [a]);
		return { id: live.id, opened: false };
	}
	return { id: await openAlarm(trx, a, null), opened: true };
}

async function openAlarmAfter(trx: Knex.Transaction | Knex, oldId: number, a: RaiseInput, reason: string): Promise<number> {
	await clear(trx, oldId, 'acknowledged', a.at, `Superseded by a new alarm: ${reason}.`);
	return openAlarm(trx, a, { id: oldId, reason });
}

/** Extend a live alarm by violations in time order, in one update. */
async function extend(trx: Knex.Transaction | Knex, live: Pick<LiveRow, 'id' | 'worst_ratio' | 'wafer_count' | 'last_seen_at'>, vs: RaiseInput[]): Promise<void> {
	if (vs.length === 0) return;
	const last = vs[vs.length - 1];
	let worst: RaiseInput | null = null;
	for (const v of vs) if (v.ratio > Number(live.worst_ratio ?? -Infinity) && (!worst || v.ratio > worst.ratio)) worst = v;
	const patch: Record<string, unknown> = {
		last_seen_at: Math.max(Number(live.last_seen_at), last.at),
		wafer_count: Number(live.wafer_count) + vs.length,
		quiet_count: 0
	};
	if (last.waferStepId !== null) patch.last_wafer_step_id = last.waferStepId;
	if (worst) {
		patch.worst_ratio = worst.ratio;
		if (worst.waferStepId !== null) patch.worst_wafer_step_id = worst.waferStepId;
		patch.detail_json = JSON.stringify(worst.detail);
		if (worst.leading) patch.leading_json = JSON.stringify(worst.leading.slice(0, 5));
	}
	await trx('alarms').where({ id: live.id }).update(patch);
}

/**
 * The violations of one rule on one chamber × step, in time order. Same result as calling
 * {@link raiseOrExtend} for each, with one update for every stretch an open alarm absorbs (an
 * acknowledged alarm is judged wafer by wafer, since any of them may supersede it).
 * @returns the live alarm after the last violation and whether any alarm was opened (null: none)
 */
export async function raiseOrExtendAll(
	trx: Knex.Transaction | Knex,
	base: { chamberId: number; recipeStepId: number; baselineId: number | null; rule: AlarmRule },
	violations: (Violation | RaiseInput)[],
	policy: EpisodePolicy = DEFAULT_EPISODE
): Promise<{ id: number; opened: boolean; openedIds: number[] } | null> {
	if (violations.length === 0) return null;
	const inputs: RaiseInput[] = violations.map((v) =>
		'point' in v
			? { ...base, waferStepId: v.point.waferStepId, at: v.point.processedAt, ratio: v.point.worstRatio, detail: v.detail, leading: v.leading }
			: v
	);
	const openedIds: number[] = [];
	let live = await liveAlarm(trx, base.chamberId, base.recipeStepId, base.rule);
	let cause: { code: string; category: string } | null | undefined;
	let i = 0;
	while (i < inputs.length) {
		if (!live) {
			const id = await openAlarm(trx, inputs[i], null);
			openedIds.push(id);
			i++;
			live = (await liveAlarm(trx, base.chamberId, base.recipeStepId, base.rule))!;
			continue;
		}
		if (live.state === 'open') {
			await extend(trx, live, inputs.slice(i));
			break;
		}
		cause ??= await ackCauseOf(trx, live.id);
		const reason = supersedeReason(live, inputs[i], cause, policy);
		if (reason) {
			const id = await openAlarmAfter(trx, live.id, inputs[i], reason);
			openedIds.push(id);
			cause = undefined;
			i++;
			live = (await liveAlarm(trx, base.chamberId, base.recipeStepId, base.rule))!;
			continue;
		}
		await extend(trx, live, [inputs[i]]);
		i++;
		live = (await liveAlarm(trx, base.chamberId, base.recipeStepId, base.rule))!;
	}
	const final = await liveAlarm(trx, base.chamberId, base.recipeStepId, base.rule);
	const id = final?.id ?? openedIds[openedIds.length - 1];
	return { id, opened: openedIds.length > 0, openedIds };
}

/**
 * Count in-control wafers against the live wafer-rule alarms of a chamber × step, and clear each
 * one whose run of consecutive in-control wafers after its latest violation reaches `clearAfter`.
 * `points` are the judged wafers of this batch in time order with `quiet` from
 * quietPoints (seasoning wafers left out: they neither count nor break a run). Fleet alarms are
 * not wafer episodes and are left alone.
 * @returns the ids of the alarms cleared
 */
export async function settleEpisodes(
	trx: Knex.Transaction | Knex,
	q: { chamberId: number; recipeStepId: number; clearAfter: number },
	points: { processedAt: number; quiet: boolean }[]
): Promise<number[]> {
	if (points.length === 0) return [];
	const live = await trx('alarms')
		.where({ chamber_id: q.chamberId, recipe_step_id: q.recipeStepId })
		.whereIn('state', LIVE_STATES)
		.whereNot('rule', 'fleet')
		.select('id', 'state', 'last_seen_at', 'quiet_count');
	const cleared: number[] = [];
	for (const a of live) {
		let count = Number(a.quiet_count);
		let clearedAt: number | null = null;
		for (const p of points) {
			if (p.processedAt <= Number(a.last_seen_at)) continue;
			count = p.quiet ? count + 1 : 0;
			if (count >= q.clearAfter) {
				clearedAt = p.processedAt;
				break;
			}
		}
		if (clearedAt !== null) {
			await trx('alarms').where({ id: a.id }).update({ quiet_count: count });
			await clear(trx, a.id, a.state, clearedAt, `Back in control: ${q.clearAfter} consecutive wafers within their limits.`);
			cleared.push(a.id);
		} else if (count !== Number(a.quiet_count)) await trx('alarms').where({ id: a.id }).update({ quiet_count: count });
	}
	return cleared;
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
		const alarms = await trx('alarms').whereIn('id', a.alarmIds).select('id', 'state', 'worst_ratio', 'leading_json');
		const missing = a.alarmIds.filter((id) => !alarms.some((x) => x.id === id));
		if (missing.length) throw new AlarmError(`No alarm ${missing.join(', ')}.`, 'alarmIds');
		const closed = alarms.filter((x) => x.state === 'closed');
		if (closed.length) throw new AlarmError(`Alarm ${closed.map((x) => x.id).join(', ')} is closed already.`, 'alarmIds');
		const t = now();
		for (const al of alarms) {
			// A cleared alarm keeps its state (the episode is over); the cause is recorded all the same.
			const to = al.state === 'cleared' ? 'cleared' : 'acknowledged';
			await trx('alarms').where({ id: al.id }).update({ state: to, acknowledged_at: t, ack_ratio: al.worst_ratio, ack_leading_json: al.leading_json });
			await trx('alarm_actions').insert({
				alarm_id: al.id,
				at: t,
				user_id: a.userId,
				action: 'acknowledged',
				from_state: al.state,
				to_state: to,
				cause_code_id: cause.id,
				disposition: a.disposition,
				comment: comment || null
			});
		}
		return { acknowledged: alarms.map((x) => x.id) };
	});
}

/** Close an alarm (the condition is resolved, or a cleared one reviewed); a new violation afterwards opens a new alarm. */
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
