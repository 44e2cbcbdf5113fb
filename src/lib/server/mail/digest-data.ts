/**
 * What a digest says, gathered for one subscriber's scope and period (from, to]: read-only queries over
 * the tables the engine and the alarm workflow write. Rendering is digest-render.ts.
 */
import type { Knex } from 'knex';
import { DISPOSITIONS, RULE_LABELS, type AlarmRule } from '../alarms.ts';
import { db } from '../db.ts';
import { MAINTENANCE_KINDS, type MaintenanceKind } from '../maintenance.ts';
import { alarmFacts, leakGasesOf, type AlarmFacts } from './alarm-facts.ts';
import type { HourPoint } from './chart.ts';

const HOUR = 3_600_000;

export interface DigestData {
	from: number;
	to: number;
	chambersInScope: number;
	waferSteps: number;
	alarmsOpened: number;
	flagged: {
		chamberCode: string;
		recipeStepId: number;
		recipeStep: string;
		runAt: number;
		modifiedZ: number;
		separating: string[];
		leakGases: string[];
	}[];
	openAlarms: {
		id: number;
		chamberCode: string;
		recipeStep: string;
		rule: string;
		severity: 'warning' | 'alarm';
		openedAt: number;
		ageHours: number;
		worstRatio: number | null;
		waferCount: number;
		facts: AlarmFacts;
	}[];
	/** open alarms by age: < 8 h, 8–24 h, 1–3 days, > 3 days */
	openByAge: { label: string; count: number }[];
	acknowledgedLive: number;
	acknowledged: {
		alarmId: number;
		chamberCode: string;
		rule: string;
		at: number;
		userName: string | null;
		causeCode: string | null;
		causeTitle: string | null;
		disposition: string | null;
		comment: string | null;
	}[];
	requalify: { chamberCode: string; since: number; reason: string | null }[];
	worstWaferSteps: {
		waferStepId: number;
		waferId: string;
		lotId: string;
		chamberCode: string;
		recipeStep: string;
		processedAt: number;
		worstRatio: number;
		t2Ratio: number;
		qRatio: number;
		seasoning: boolean;
	}[];
	maintenance: { chamberCode: string; kind: string; at: number; userName: string | null; comment: string | null }[];
	hourly: HourPoint[];
	/** the gases of every leak-like signature in the digest (empty: no reminder needed) */
	leakGases: string[];
}

const MAX_OPEN_LISTED = 25;

function inChunks<T>(ids: T[], size = 500): T[][] {
	const out: T[][] = [];
	for (let i = 0; i < ids.length; i += size) out.push(ids.slice(i, i + size));
	return out.length ? out : [[]];
}

export async function gatherDigest(chamberIds: number[], period: { from: number; to: number }, k: Knex = db()): Promise<DigestData> {
	const { from, to } = period;
	const scoped = <Q extends Knex.QueryBuilder>(q: Q, col: string): Q => {
		// Scopes are at most a few hundred chambers; a long list goes in chunks of OR'd IN lists.
		q.where((w) => {
			for (const chunk of inChunks(chamberIds)) w.orWhereIn(col, chunk);
		});
		return q;
	};

	// Fleet matching: the latest flagged run per chamber × step in the period.
	const flaggedRows = await scoped(
		k('fleet_matches as f')
			.join('chambers as c', 'c.id', 'f.chamber_id')
			.join('recipe_steps as rs', 'rs.id', 'f.recipe_step_id')
			.join('recipes as r', 'r.id', 'rs.recipe_id')
			.where('f.flagged', true)
			.andWhere('f.run_at', '>', from)
			.andWhere('f.run_at', '<=', to)
			.orderBy('f.run_at', 'desc')
			.select('f.chamber_id', 'f.recipe_step_id', 'f.run_at', 'f.modified_z', 'f.median_z', 'f.separating_json', 'c.code', 'r.code as recipe', 'rs.name as step'),
		'f.chamber_id'
	);
	const seen = new Set<string>();
	const flagged: DigestData['flagged'] = [];
	for (const r of flaggedRows) {
		const key = `${r.chamber_id}:${r.recipe_step_id}`;
		if (seen.has(key)) continue;
		seen.add(key);
		let sep: { feature: string; flagged: boolean; z?: number; modifiedZ?: number }[] = [];
		try {
			sep = JSON.parse(r.separating_json);
		} catch {
			sep = [];
		}
		const separating = sep
			.filter((s) => s.flagged)
			.sort((a, b) => Math.abs(b.z ?? b.modifiedZ ?? 0) - Math.abs(a.z ?? a.modifiedZ ?? 0))
			.slice(0, 5);
		flagged.push({
			chamberCode: r.code,
			recipeStepId: r.recipe_step_id,
			recipeStep: `${r.recipe} / ${r.step}`,
			runAt: Number(r.run_at),
			modifiedZ: Number(r.modified_z),
			separating: separating.map((s) => s.feature),
			leakGases: leakGasesOf(sep.filter((s) => s.flagged), Number(r.median_z ?? 0))
		});
	}
	flagged.sort((a, b) => Math.abs(b.modifiedZ) - Math.abs(a.modifiedZ) || a.chamberCode.localeCompare(b.chamberCode));

	// Open alarms, oldest first (the ones waiting longest for an answer).
	const alarmBase = () =>
		scoped(
			k('alarms as a')
				.join('chambers as c', 'c.id', 'a.chamber_id')
				.join('recipe_steps as rs', 'rs.id', 'a.recipe_step_id')
				.join('recipes as r', 'r.id', 'rs.recipe_id')
				.andWhere('a.opened_at', '<=', to),
			'a.chamber_id'
		);
	const openRows = await alarmBase()
		.where('a.state', 'open')
		.orderBy([{ column: 'a.opened_at' }, { column: 'a.id' }])
		.select('a.*', 'c.code', 'r.code as recipe', 'rs.name as step');
	const buckets = [
		{ label: 'under 8 h', max: 8 },
		{ label: '8–24 h', max: 24 },
		{ label: '1–3 days', max: 72 },
		{ label: 'over 3 days', max: Infinity }
	];
	const openByAge = buckets.map((b) => ({ label: b.label, count: 0 }));
	const openAlarms: DigestData['openAlarms'] = [];
	const leak = new Set<string>();
	for (const r of openRows) {
		const ageHours = (to - Number(r.opened_at)) / HOUR;
		openByAge[buckets.findIndex((b) => ageHours < b.max)].count++;
		let detail: Record<string, unknown> = {};
		try {
			detail = r.detail_json ? JSON.parse(r.detail_json) : {};
		} catch {
			detail = {};
		}
		// Every open alarm is checked for a leak-like signature, listed or not: the reminder must not
		// depend on where the list was cut.
		const facts = await alarmFacts({ rule: r.rule, baselineId: r.baseline_id, worstWaferStepId: r.worst_wafer_step_id, detail }, k);
		for (const g of facts.leakGases) leak.add(g);
		if (openAlarms.length < MAX_OPEN_LISTED)
			openAlarms.push({
				id: r.id,
				chamberCode: r.code,
				recipeStep: `${r.recipe} / ${r.step}`,
				rule: RULE_LABELS[r.rule as AlarmRule] ?? r.rule,
				severity: r.severity,
				openedAt: Number(r.opened_at),
				ageHours,
				worstRatio: r.worst_ratio === null ? null : Number(r.worst_ratio),
				waferCount: Number(r.wafer_count),
				facts
			});
	}
	const ackLive = await alarmBase().where('a.state', 'acknowledged').count({ n: '*' }).first();
	const opened = await alarmBase().andWhere('a.opened_at', '>', from).count({ n: '*' }).first();

	const acknowledged = (
		await scoped(
			k('alarm_actions as x')
				.join('alarms as a', 'a.id', 'x.alarm_id')
				.join('chambers as c', 'c.id', 'a.chamber_id')
				.leftJoin('users as u', 'u.id', 'x.user_id')
				.leftJoin('cause_codes as cc', 'cc.id', 'x.cause_code_id')
				.where('x.action', 'acknowledged')
				.andWhere('x.at', '>', from)
				.andWhere('x.at', '<=', to)
				.orderBy([{ column: 'x.at' }, { column: 'x.id' }])
				.select('x.alarm_id', 'x.at', 'x.disposition', 'x.comment', 'a.rule', 'c.code', 'u.display_name', 'cc.code as cause_code', 'cc.title as cause_title'),
			'a.chamber_id'
		)
	).map((r) => ({
		alarmId: r.alarm_id,
		chamberCode: r.code,
		rule: RULE_LABELS[r.rule as AlarmRule] ?? r.rule,
		at: Number(r.at),
		userName: r.display_name ?? null,
		causeCode: r.cause_code ?? null,
		causeTitle: r.cause_title ?? null,
		disposition: r.disposition ? (DISPOSITIONS[r.disposition as keyof typeof DISPOSITIONS] ?? r.disposition) : null,
		comment: r.comment ?? null
	}));

	const requalify = (
		await scoped(k('chambers as c').whereNotNull('c.requalify_since').orderBy('c.requalify_since').select('c.code', 'c.requalify_since', 'c.requalify_reason'), 'c.id')
	).map((r) => ({ chamberCode: r.code, since: Number(r.requalify_since), reason: r.requalify_reason ?? null }));

	const worstWaferSteps = (
		await scoped(
			k('scores as s')
				.join('wafer_steps as w', 'w.id', 's.wafer_step_id')
				.join('chambers as c', 'c.id', 's.chamber_id')
				.join('recipe_steps as rs', 'rs.id', 's.recipe_step_id')
				.join('recipes as r', 'r.id', 'rs.recipe_id')
				.where('s.current', true)
				.andWhere('s.processed_at', '>', from)
				.andWhere('s.processed_at', '<=', to)
				.orderBy([{ column: 's.worst_ratio', order: 'desc' }, { column: 's.id' }])
				.limit(5)
				.select('s.wafer_step_id', 's.processed_at', 's.worst_ratio', 's.t2_ratio', 's.q_ratio', 's.seasoning', 'w.wafer_id', 'w.lot_id', 'c.code', 'r.code as recipe', 'rs.name as step'),
			's.chamber_id'
		)
	).map((r) => ({
		waferStepId: r.wafer_step_id,
		waferId: r.wafer_id,
		lotId: r.lot_id,
		chamberCode: r.code,
		recipeStep: `${r.recipe} / ${r.step}`,
		processedAt: Number(r.processed_at),
		worstRatio: Number(r.worst_ratio),
		t2Ratio: Number(r.t2_ratio),
		qRatio: Number(r.q_ratio),
		seasoning: Boolean(r.seasoning)
	}));

	const maintenance = (
		await scoped(
			k('maintenance_events as m')
				.join('chambers as c', 'c.id', 'm.chamber_id')
				.leftJoin('users as u', 'u.id', 'm.user_id')
				.where('m.at', '>', from)
				.andWhere('m.at', '<=', to)
				.orderBy('m.at')
				.select('c.code', 'm.kind', 'm.at', 'm.comment', 'u.display_name'),
			'm.chamber_id'
		)
	).map((r) => ({ chamberCode: r.code, kind: MAINTENANCE_KINDS[r.kind as MaintenanceKind] ?? r.kind, at: Number(r.at), userName: r.display_name ?? null, comment: r.comment ?? null }));

	// The chart: worst ratio of any chamber in scope per hour; hours without wafers are gaps.
	const hourRows = await scoped(
		k('hourly_rollups as h')
			.where('h.hour_at', '>=', Math.floor(from / HOUR) * HOUR)
			.andWhere('h.hour_at', '<', to)
			.groupBy('h.hour_at')
			.select('h.hour_at')
			.max({ worst: 'h.worst_ratio' })
			.sum({ wafers: 'h.wafer_count' }),
		'h.chamber_id'
	);
	const byHour = new Map((hourRows as { hour_at: number; worst: number | null }[]).map((r) => [Number(r.hour_at), r.worst === null ? null : Number(r.worst)]));
	const hourly: HourPoint[] = [];
	for (let h = Math.floor(from / HOUR) * HOUR; h < to; h += HOUR) hourly.push({ hourAt: h, worst: byHour.get(h) ?? null });
	// wafer-steps scored in the period, from the score rows themselves (the rollups are per hour)
	const counted = await scoped(
		k('scores as s').where('s.current', true).andWhere('s.processed_at', '>', from).andWhere('s.processed_at', '<=', to).count({ n: '*' }),
		's.chamber_id'
	).first();

	for (const f of flagged) for (const g of f.leakGases) leak.add(g);
	return {
		from,
		to,
		chambersInScope: chamberIds.length,
		waferSteps: Number(counted?.n ?? 0),
		alarmsOpened: Number(opened?.n ?? 0),
		flagged,
		openAlarms,
		openByAge,
		acknowledgedLive: Number(ackLive?.n ?? 0),
		acknowledged,
		requalify,
		worstWaferSteps,
		maintenance,
		hourly,
		leakGases: [...leak].sort()
	};
}

export function openAlarmCount(d: DigestData): number {
	return d.openByAge.reduce((s, b) => s + b.count, 0);
}
