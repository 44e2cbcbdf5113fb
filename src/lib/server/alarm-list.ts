/**
 * Alarms for the JSON API (`GET /api/alarms`): one row per alarm with its rule, severity, state, first,
 * latest and worst wafer, worst ratio and leading contributors. Filters are validated here, each
 * refusal naming its query parameter.
 */
import type { Knex } from 'knex';
import { db } from './db.ts';
import { RULE_LABELS, STATE_LABELS, type AlarmRule, type AlarmState } from './alarms.ts';

export const API_STATES = ['live', 'open', 'acknowledged', 'cleared', 'closed', 'all'] as const;
export type ApiStateFilter = (typeof API_STATES)[number];

export class AlarmQueryError extends Error {
	constructor(
		message: string,
		readonly field: string
	) {
		super(message);
	}
}

export interface AlarmQuery {
	state: ApiStateFilter;
	chamber: string | null;
	since: number | null;
	limit: number;
}

/** Parse `state`, `chamber`, `since` (ISO 8601 with a zone, or epoch milliseconds) and `limit`. */
export function parseAlarmQuery(params: URLSearchParams): AlarmQuery {
	const state = (params.get('state') ?? 'live').trim() || 'live';
	if (!(API_STATES as readonly string[]).includes(state))
		throw new AlarmQueryError(`state must be one of ${API_STATES.join(', ')}; got "${state.slice(0, 40)}".`, 'state');
	const chamber = params.get('chamber')?.trim() || null;
	if (chamber !== null && chamber.length > 64) throw new AlarmQueryError('chamber is a chamber code of at most 64 characters.', 'chamber');
	let since: number | null = null;
	const s = params.get('since')?.trim();
	if (s) {
		if (/^\d{10,16}$/.test(s)) since = Number(s);
		else if (/^\d{4}-\d{2}-\d{2}(T\d{2}:\d{2}(:\d{2}(\.\d+)?)?(Z|[+-]\d{2}:\d{2}))?$/.test(s)) since = Date.parse(s.length === 10 ? `${s}T00:00:00Z` : s);
		if (since === null || !Number.isFinite(since))
			throw new AlarmQueryError(`since must be an ISO 8601 date or date-time with a zone (e.g. 2026-12-01T06:00:00Z) or epoch milliseconds; got "${s.slice(0, 40)}".`, 'since');
	}
	const l = params.get('limit')?.trim();
	const limit = l ? Number(l) : 500;
	if (!(Number.isInteger(limit) && limit >= 1 && limit <= 5000)) throw new AlarmQueryError('limit must be a whole number from 1 to 5,000.', 'limit');
	return { state: state as ApiStateFilter, chamber, since, limit };
}

export interface ApiWafer {
	waferStepId: number;
	waferId: string;
	lotId: string;
	processedAt: string;
}

export interface ApiAlarm {
	id: number;
	rule: AlarmRule;
	ruleLabel: string;
	severity: 'alarm' | 'warning';
	state: AlarmState;
	stateLabel: string;
	chamber: string;
	recipe: string;
	step: string;
	openedAt: string;
	lastSeenAt: string;
	acknowledgedAt: string | null;
	clearedAt: string | null;
	closedAt: string | null;
	waferCount: number;
	firstWafer: ApiWafer | null;
	latestWafer: ApiWafer | null;
	worstWafer: ApiWafer | null;
	worstRatio: number | null;
	leadingContributors: string[];
	supersedes: number | null;
}

const iso = (v: unknown) => (v === null || v === undefined ? null : new Date(Number(v)).toISOString());

/** The alarms matching a query, newest latest-wafer first; throws AlarmQueryError for an unknown chamber. */
export async function listAlarmsForApi(q: AlarmQuery, k: Knex = db()): Promise<{ alarms: ApiAlarm[]; truncated: boolean }> {
	let chamberId: number | null = null;
	if (q.chamber) {
		const c = await k('chambers').where({ code: q.chamber }).first('id');
		if (!c) throw new AlarmQueryError(`No chamber "${q.chamber}".`, 'chamber');
		chamberId = c.id;
	}
	const query = k('alarms as a')
		.join('chambers as c', 'c.id', 'a.chamber_id')
		.join('recipe_steps as s', 's.id', 'a.recipe_step_id')
		.join('recipes as r', 'r.id', 's.recipe_id')
		.select('a.*', 'c.code as chamber_code', 'r.code as recipe_code', 's.name as step_name');
	if (q.state === 'live') query.whereIn('a.state', ['open', 'acknowledged']);
	else if (q.state !== 'all') query.where('a.state', q.state);
	if (chamberId !== null) query.where('a.chamber_id', chamberId);
	if (q.since !== null) query.where('a.last_seen_at', '>=', q.since);
	const rows = await query.orderBy([{ column: 'a.last_seen_at', order: 'desc' }, { column: 'a.id', order: 'desc' }]).limit(q.limit + 1);
	const truncated = rows.length > q.limit;
	const list = rows.slice(0, q.limit);
	const waferIds = [...new Set(list.flatMap((r) => [r.first_wafer_step_id, r.last_wafer_step_id, r.worst_wafer_step_id]).filter((x): x is number => x !== null))];
	const wafers = new Map<number, ApiWafer>();
	for (let i = 0; i < waferIds.length; i += 500)
		for (const w of await k('wafer_steps').whereIn('id', waferIds.slice(i, i + 500)).select('id', 'wafer_id', 'lot_id', 'processed_at'))
			wafers.set(w.id, { waferStepId: w.id, waferId: w.wafer_id, lotId: w.lot_id, processedAt: iso(w.processed_at)! });
	const lead = (s: string | null): string[] => {
		try {
			const v = s ? JSON.parse(s) : [];
			return Array.isArray(v) ? v.map(String) : [];
		} catch {
			return [];
		}
	};
	return {
		truncated,
		alarms: list.map((r) => ({
			id: r.id,
			rule: r.rule,
			ruleLabel: RULE_LABELS[r.rule as AlarmRule] ?? r.rule,
			severity: r.severity,
			state: r.state,
			stateLabel: STATE_LABELS[r.state as AlarmState] ?? r.state,
			chamber: r.chamber_code,
			recipe: r.recipe_code,
			step: r.step_name,
			openedAt: iso(r.opened_at)!,
			lastSeenAt: iso(r.last_seen_at)!,
			acknowledgedAt: iso(r.acknowledged_at),
			clearedAt: iso(r.cleared_at),
			closedAt: iso(r.closed_at),
			waferCount: Number(r.wafer_count),
			firstWafer: wafers.get(r.first_wafer_step_id) ?? null,
			latestWafer: wafers.get(r.last_wafer_step_id) ?? null,
			worstWafer: wafers.get(r.worst_wafer_step_id) ?? null,
			worstRatio: r.worst_ratio === null ? null : Number(r.worst_ratio),
			leadingContributors: lead(r.leading_json),
			supersedes: r.supersedes_id ?? null
		}))
	};
}
