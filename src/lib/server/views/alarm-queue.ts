/**
 * Read model of the alarm screens: the filtered queue, one alarm with its audit trail, the cause-code
 * Pareto and the median time to acknowledge per area. Writes go through alarms.ts (acknowledgeAlarms,
 * closeAlarm); nothing here changes state.
 */
import type { Knex } from 'knex';
import { median } from 'simple-statistics';
import { leakSignature as leakRule, waferLeakSignature, type LeakGas } from '../../monitoring/index.ts';
import { DISPOSITIONS, LIVE_STATES, RULE_LABELS, type AlarmRule } from '../alarms.ts';
import { getModel } from '../baselines.ts';
import { db } from '../db.ts';
import { decodeValues } from '../feature-values.ts';
import { now } from '../time.ts';

const HOUR = 3_600_000;

export const STATE_FILTERS = { live: 'Open or acknowledged', open: 'Open', acknowledged: 'Acknowledged', cleared: 'Cleared (back in control)', closed: 'Closed', all: 'All' } as const;
export type StateFilter = keyof typeof STATE_FILTERS;
/** Age of an alarm = now − opened. "lt" keeps younger ones, "gt" older ones. */
export const AGE_FILTERS = { any: 'Any age', lt8h: 'Opened in the last 8 h', lt24h: 'Opened in the last 24 h', gt24h: 'Older than 24 h', gt3d: 'Older than 3 days' } as const;
export type AgeFilter = keyof typeof AGE_FILTERS;

export interface QueueFilters {
	state: StateFilter;
	area: string | null;
	chamber: string | null;
	rule: AlarmRule | null;
	age: AgeFilter;
}

/** Filters from a URL's query string; unknown values fall back to the defaults (the page says which). */
export function parseQueueFilters(sp: URLSearchParams): { filters: QueueFilters; ignored: string[] } {
	const ignored: string[] = [];
	const pick = <T extends string>(name: string, allowed: readonly T[], dflt: T): T => {
		const v = sp.get(name);
		if (v === null || v === '') return dflt;
		if ((allowed as readonly string[]).includes(v)) return v as T;
		ignored.push(name);
		return dflt;
	};
	const code = (name: string) => {
		const v = (sp.get(name) ?? '').trim();
		if (!v) return null;
		if (!/^[A-Za-z0-9._-]{1,32}$/.test(v)) {
			ignored.push(name);
			return null;
		}
		return v;
	};
	const rule = pick<AlarmRule | ''>('rule', ['', ...(Object.keys(RULE_LABELS) as AlarmRule[])], '');
	return {
		filters: {
			state: pick('state', Object.keys(STATE_FILTERS) as StateFilter[], 'live'),
			area: code('area'),
			chamber: code('chamber'),
			rule: rule === '' ? null : rule,
			age: pick('age', Object.keys(AGE_FILTERS) as AgeFilter[], 'any')
		},
		ignored
	};
}

export interface AckSummary {
	at: number;
	userName: string | null;
	causeCode: string | null;
	causeTitle: string | null;
	disposition: keyof typeof DISPOSITIONS | null;
	comment: string | null;
}

export interface QueueAlarm {
	id: number;
	chamberId: number;
	chamberCode: string;
	toolCode: string;
	areaCode: string;
	areaName: string;
	recipeStepId: number;
	recipeCode: string;
	stepName: string;
	rule: AlarmRule;
	ruleLabel: string;
	severity: 'warning' | 'alarm';
	state: 'open' | 'acknowledged' | 'cleared' | 'closed';
	openedAt: number;
	lastSeenAt: number;
	waferCount: number;
	worstRatio: number | null;
	worstWaferStepId: number | null;
	worstWaferId: string | null;
	baselineId: number | null;
	detail: Record<string, unknown>;
	acknowledgedAt: number | null;
	closedAt: number | null;
	/** When the episode ended by itself (a run of in-control wafers, or superseded by a new alarm). */
	clearedAt: number | null;
	/** The earlier alarm this one took over from (an acknowledged alarm it must not hide behind). */
	supersedesId: number | null;
	requalify: boolean;
	lastAck: AckSummary | null;
	/** gases whose lines lead the alarm (N2, He…) when the signature is leak-like */
	leak: LeakSignature | null;
}

export interface LeakSignature {
	/** as the alarm screens name them: N2 for air (N₂ bands, CN), He for backside helium */
	gases: ('N2' | 'He')[];
	features: string[];
	basis: 'q-contributions' | 'fleet-separation';
}

const GAS_CODE: Record<LeakGas, 'N2' | 'He'> = { air: 'N2', helium: 'He' };

function base(k: Knex) {
	return k('alarms as a')
		.join('chambers as c', 'c.id', 'a.chamber_id')
		.join('tools as t', 't.id', 'c.tool_id')
		.join('areas as ar', 'ar.id', 't.area_id')
		.join('recipe_steps as rs', 'rs.id', 'a.recipe_step_id')
		.join('recipes as r', 'r.id', 'rs.recipe_id')
		.leftJoin('wafer_steps as w', 'w.id', 'a.worst_wafer_step_id')
		.select(
			'a.*',
			'c.code as chamber_code',
			'c.requalify_since',
			't.code as tool_code',
			'ar.code as area_code',
			'ar.name as area_name',
			'r.code as recipe_code',
			'rs.name as step_name',
			'w.wafer_id as worst_wafer_id'
		);
}

// eslint-disable-next-line @typescript-eslint/no-explicit-any
function toAlarm(r: any): Omit<QueueAlarm, 'lastAck' | 'leak'> {
	let detail: Record<string, unknown> = {};
	try {
		detail = r.detail_json ? JSON.parse(r.detail_json) : {};
	} catch {
		detail = {};
	}
	return {
		id: r.id,
		chamberId: r.chamber_id,
		chamberCode: r.chamber_code,
		toolCode: r.tool_code,
		areaCode: r.area_code,
		areaName: r.area_name,
		recipeStepId: r.recipe_step_id,
		recipeCode: r.recipe_code,
		stepName: r.step_name,
		rule: r.rule,
		ruleLabel: RULE_LABELS[r.rule as AlarmRule] ?? r.rule,
		severity: r.severity,
		state: r.state,
		openedAt: Number(r.opened_at),
		lastSeenAt: Number(r.last_seen_at),
		waferCount: Number(r.wafer_count),
		worstRatio: r.worst_ratio === null ? null : Number(r.worst_ratio),
		worstWaferStepId: r.worst_wafer_step_id,
		worstWaferId: r.worst_wafer_id ?? null,
		baselineId: r.baseline_id,
		detail,
		acknowledgedAt: r.acknowledged_at === null ? null : Number(r.acknowledged_at),
		closedAt: r.closed_at === null ? null : Number(r.closed_at),
		clearedAt: r.cleared_at == null ? null : Number(r.cleared_at),
		supersedesId: r.supersedes_id ?? null,
		requalify: r.requalify_since !== null
	};
}

/** The latest acknowledgement of each alarm (cause, disposition, who). */
export async function lastAcks(ids: number[], k: Knex): Promise<Map<number, AckSummary>> {
	const out = new Map<number, AckSummary>();
	for (let i = 0; i < ids.length; i += 500) {
		const rows = await k('alarm_actions as x')
			.leftJoin('users as u', 'u.id', 'x.user_id')
			.leftJoin('cause_codes as cc', 'cc.id', 'x.cause_code_id')
			.whereIn('x.alarm_id', ids.slice(i, i + 500))
			.andWhere('x.action', 'acknowledged')
			.orderBy([{ column: 'x.at' }, { column: 'x.id' }])
			.select('x.alarm_id', 'x.at', 'u.display_name', 'cc.code', 'cc.title', 'x.disposition', 'x.comment');
		for (const r of rows)
			out.set(r.alarm_id, { at: Number(r.at), userName: r.display_name, causeCode: r.code, causeTitle: r.title, disposition: r.disposition, comment: r.comment });
	}
	return out;
}

/**
 * The alarm's leak-like signature by the engine's one rule (monitoring/leak-signature.ts), which the
 * mails and the wafer page use too: for a fleet alarm its separating features, for a wafer alarm its
 * worst wafer (reconstruction-based Q contributions with their golden z).
 */
async function leakSignature(a: Omit<QueueAlarm, 'lastAck' | 'leak'>, k: Knex): Promise<LeakSignature | null> {
	if (a.rule === 'fleet') {
		const sep = Array.isArray(a.detail.separating) ? (a.detail.separating as unknown[]).map(String) : [];
		const s = leakRule('fleet', sep.map((feature) => ({ feature })));
		return s ? { gases: s.gases.map((g) => GAS_CODE[g]), features: s.channels, basis: 'fleet-separation' } : null;
	}
	if (a.worstWaferStepId === null || a.baselineId === null) return null;
	const w = await k('wafer_steps').where({ id: a.worstWaferStepId }).first('feature_values');
	if (!w) return null;
	try {
		const model = await getModel(a.baselineId, k);
		const values = decodeValues(w.feature_values);
		if (values.length !== model.p) return null;
		const s = waferLeakSignature(model, values);
		return s ? { gases: s.gases.map((g) => GAS_CODE[g]), features: s.channels, basis: 'q-contributions' } : null;
	} catch {
		return null; // an unreadable model or vector: no reminder rather than a broken queue
	}
}

export async function listQueue(f: QueueFilters, opts: { limit?: number; at?: number } = {}, k: Knex = db()): Promise<{ alarms: QueueAlarm[]; total: number }> {
	const at = opts.at ?? now();
	const q = base(k);
	if (f.state === 'live') q.whereIn('a.state', LIVE_STATES);
	else if (f.state !== 'all') q.where('a.state', f.state);
	if (f.area) q.where('ar.code', f.area);
	if (f.chamber) q.where('c.code', f.chamber);
	if (f.rule) q.where('a.rule', f.rule);
	if (f.age === 'lt8h') q.where('a.opened_at', '>=', at - 8 * HOUR);
	if (f.age === 'lt24h') q.where('a.opened_at', '>=', at - 24 * HOUR);
	if (f.age === 'gt24h') q.where('a.opened_at', '<', at - 24 * HOUR);
	if (f.age === 'gt3d') q.where('a.opened_at', '<', at - 72 * HOUR);
	const total = Number((await q.clone().clearSelect().clearOrder().count({ n: '*' }).first())?.n ?? 0);
	const rows = await q
		.orderByRaw(`case a.state when 'open' then 0 when 'acknowledged' then 1 when 'cleared' then 2 else 3 end`)
		.orderBy([{ column: 'a.severity' }, { column: 'a.last_seen_at', order: 'desc' }])
		.limit(opts.limit ?? 300);
	const alarms = rows.map(toAlarm);
	const acks = await lastAcks(alarms.map((a) => a.id), k);
	const out: QueueAlarm[] = [];
	for (const a of alarms) out.push({ ...a, lastAck: acks.get(a.id) ?? null, leak: a.state === 'closed' || a.state === 'cleared' ? null : await leakSignature(a, k) });
	return { alarms: out, total };
}

export interface AuditEntry {
	id: number;
	at: number;
	action: string;
	fromState: string | null;
	toState: string | null;
	userName: string | null;
	causeCode: string | null;
	causeTitle: string | null;
	disposition: string | null;
	dispositionLabel: string | null;
	comment: string | null;
}

export async function getAlarm(id: number, k: Knex = db()): Promise<{ alarm: QueueAlarm; audit: AuditEntry[]; neighbours: QueueAlarm[] } | null> {
	const row = await base(k).where('a.id', id).first();
	if (!row) return null;
	const a = toAlarm(row);
	const acks = await lastAcks([a.id], k);
	const alarm: QueueAlarm = { ...a, lastAck: acks.get(a.id) ?? null, leak: await leakSignature(a, k) };
	const audit = (
		await k('alarm_actions as x')
			.leftJoin('users as u', 'u.id', 'x.user_id')
			.leftJoin('cause_codes as cc', 'cc.id', 'x.cause_code_id')
			.where('x.alarm_id', id)
			.orderBy([{ column: 'x.at' }, { column: 'x.id' }])
			.select('x.id', 'x.at', 'x.action', 'x.from_state', 'x.to_state', 'u.display_name', 'cc.code', 'cc.title', 'x.disposition', 'x.comment')
	).map((r) => ({
		id: r.id,
		at: Number(r.at),
		action: r.action,
		fromState: r.from_state,
		toState: r.to_state,
		userName: r.display_name,
		causeCode: r.code,
		causeTitle: r.title,
		disposition: r.disposition,
		dispositionLabel: r.disposition ? (DISPOSITIONS[r.disposition as keyof typeof DISPOSITIONS] ?? r.disposition) : null,
		comment: r.comment
	}));
	// Other live alarms of the same chamber: candidates for one acknowledgement together.
	const others = await base(k).where('a.chamber_id', a.chamberId).whereNot('a.id', id).whereIn('a.state', LIVE_STATES).orderBy('a.opened_at');
	const neighbourAcks = await lastAcks(others.map((o) => o.id), k);
	return { alarm, audit, neighbours: others.map(toAlarm).map((n) => ({ ...n, lastAck: neighbourAcks.get(n.id) ?? null, leak: null })) };
}

export interface QueueOptions {
	areas: { code: string; name: string }[];
	chambers: { code: string; areaCode: string }[];
	rules: { value: AlarmRule; label: string }[];
	causeCodes: { code: string; title: string; category: string }[];
}

export async function queueOptions(k: Knex = db()): Promise<QueueOptions> {
	const areas = await k('areas').orderBy('code').select('code', 'name');
	const chambers = (
		await k('chambers as c').join('tools as t', 't.id', 'c.tool_id').join('areas as ar', 'ar.id', 't.area_id').orderBy('c.code').select('c.code', 'ar.code as area_code')
	).map((r) => ({ code: r.code, areaCode: r.area_code }));
	const causeCodes = await k('cause_codes').where({ active: true }).orderBy([{ column: 'category' }, { column: 'code' }]).select('code', 'title', 'category');
	return { areas, chambers, rules: (Object.entries(RULE_LABELS) as [AlarmRule, string][]).map(([value, label]) => ({ value, label })), causeCodes };
}

export interface ParetoBar {
	code: string;
	title: string;
	category: string;
	count: number;
	cumulativeShare: number;
}

/** Acknowledgements per cause code in [from, to), most frequent first, with the cumulative share. */
export async function causePareto(q: { from: number; to: number; area?: string | null }, k: Knex = db()): Promise<ParetoBar[]> {
	const rows = await k('alarm_actions as x')
		.join('cause_codes as cc', 'cc.id', 'x.cause_code_id')
		.join('alarms as a', 'a.id', 'x.alarm_id')
		.join('chambers as c', 'c.id', 'a.chamber_id')
		.join('tools as t', 't.id', 'c.tool_id')
		.join('areas as ar', 'ar.id', 't.area_id')
		.where('x.action', 'acknowledged')
		.andWhere('x.at', '>=', q.from)
		.andWhere('x.at', '<', q.to)
		.modify((qb) => (q.area ? qb.where('ar.code', q.area) : qb))
		.groupBy('cc.code', 'cc.title', 'cc.category')
		.select('cc.code', 'cc.title', 'cc.category', k.raw('count(*) as n'));
	const bars = rows.map((r) => ({ code: r.code, title: r.title, category: r.category, count: Number(r.n) })).sort((a, b) => b.count - a.count || a.code.localeCompare(b.code));
	const total = bars.reduce((s, b) => s + b.count, 0);
	let run = 0;
	return bars.map((b) => ((run += b.count), { ...b, cumulativeShare: total ? run / total : 0 }));
}

export interface AreaResponse {
	areaCode: string;
	areaName: string;
	acknowledged: number;
	/** alarms opened in the period still without an acknowledgement */
	waiting: number;
	medianMs: number | null;
}

/**
 * Median time from an alarm's first alarming wafer (opened_at) to its first acknowledgement, per area,
 * over alarms opened in [from, to). The median, not the mean: one alarm left over a weekend should not
 * hide how fast the rest were answered (common practice for response-time reporting).
 */
export async function timeToAcknowledge(q: { from: number; to: number }, k: Knex = db()): Promise<AreaResponse[]> {
	const firstAck = k('alarm_actions').where('action', 'acknowledged').groupBy('alarm_id').select('alarm_id', k.raw('min(at) as ack_at'));
	const rows = await k('alarms as a')
		.join('chambers as c', 'c.id', 'a.chamber_id')
		.join('tools as t', 't.id', 'c.tool_id')
		.join('areas as ar', 'ar.id', 't.area_id')
		.leftJoin(firstAck.as('f'), 'f.alarm_id', 'a.id')
		.where('a.opened_at', '>=', q.from)
		.andWhere('a.opened_at', '<', q.to)
		.select('ar.code', 'ar.name', 'a.opened_at', 'a.state', 'f.ack_at');
	const areas = await k('areas').orderBy('code').select('code', 'name');
	return areas.map((ar) => {
		const mine = rows.filter((r) => r.code === ar.code);
		const delays = mine.filter((r) => r.ack_at !== null).map((r) => Math.max(0, Number(r.ack_at) - Number(r.opened_at)));
		return {
			areaCode: ar.code,
			areaName: ar.name,
			acknowledged: delays.length,
			waiting: mine.filter((r) => r.ack_at === null && r.state === 'open').length,
			medianMs: delays.length ? median(delays) : null
		};
	});
}
