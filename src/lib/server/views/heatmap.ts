/**
 * The fleet heatmap's data: one row per chamber (grouped by area and tool), one column per time
 * bucket, each cell the worst T²/limit or Q/limit of the wafer-steps in it — read from the hourly
 * rollups only, never from the raw scores, so a 30-day window over a million wafer-steps stays one
 * indexed scan of at most chambers × steps × 720 rollup rows.
 */
import { fleetRunSummary, type FleetRunSummary } from './fleet-view.ts';
import type { Knex } from 'knex';
import { z } from 'zod';
import { RULE_LABELS, type AlarmRule } from '../alarms.ts';
import { db } from '../db.ts';
import { optionalInstant } from './query-params.ts';
import { listChambers } from '../fleet-structure.ts';
import { HEAT_WINDOWS, HOUR_MS, isHeatWindow, planBuckets, type HeatWindow } from './time-buckets.ts';
import { listRecipeSteps, type RecipeStepInfo } from './recipe-steps.ts';

export interface HeatmapQuery {
	window: HeatWindow;
	/** `auto`: now, unless the window before now holds no wafers — then the latest data. */
	anchor: 'auto' | 'now' | 'latest';
	/** an explicit end instant (epoch ms); wins over `anchor` */
	end: number | null;
	area: string | null;
	recipe: string | null;
	step: string | null;
}

const Params = z.object({
	window: z.string().default('24h').refine(isHeatWindow, { message: `must be one of ${Object.keys(HEAT_WINDOWS).join(', ')}` }),
	anchor: z.enum(['auto', 'now', 'latest']).default('auto'),
	end: optionalInstant,
	area: z.string().max(32).optional(),
	recipe: z.string().max(64).optional(),
	step: z.string().max(64).optional()
});

export type ParseResult<T> = { ok: true; value: T } | { ok: false; error: string; param: string };

/** Read and validate the heatmap's query string; the error names the parameter. */
export function parseHeatmapParams(sp: URLSearchParams): ParseResult<HeatmapQuery> {
	const raw = Object.fromEntries([...sp.entries()].filter(([, v]) => v !== ''));
	const r = Params.safeParse(raw);
	if (!r.success) {
		const issue = r.error.issues[0];
		const param = String(issue.path[0] ?? 'query');
		return { ok: false, param, error: `${param}: ${issue.message}` };
	}
	const v = r.data;
	return {
		ok: true,
		value: { window: v.window as HeatWindow, anchor: v.anchor, end: v.end, area: v.area ?? null, recipe: v.recipe ?? null, step: v.step ?? null }
	};
}

export interface HeatCell {
	/** wafer-steps in the bucket */
	n: number;
	/** worst of T²/limit and Q/limit (null when none of its wafers is scored) */
	r: number | null;
	/** T²/limit and Q/limit in the bucket's worst hour (the larger one is `r`) */
	t2: number | null;
	q: number | null;
	/** the wafer-step with the worst ratio, and its wafer id */
	worst: number | null;
	worstWafer: string | null;
	/** wafer-steps beyond a limit */
	beyond: number;
	/** wafer-steps in the seasoning window after a wet clean: counted in n, kept out of r (alarms held) */
	seasoning: number;
	/** live (open) alarms of the chamber whose span touches the bucket */
	alarms: number;
}

export interface HeatChamberRow {
	id: number;
	code: string;
	name: string;
	requalify: { since: number; reason: string | null } | null;
	/** the latest fleet-matching run flagged the chamber on at least one shown step */
	fleet: { modifiedZ: number; step: string; runAt: number } | null;
	openAlarms: number;
	/** one per bucket; null = no wafers */
	cells: (HeatCell | null)[];
}

export interface HeatmapView {
	window: HeatWindow;
	bucketMs: number;
	from: number;
	to: number;
	/** the instant the view ends at, and why */
	end: number;
	anchor: 'now' | 'latest' | 'time';
	now: number;
	/** the newest wafer-step in the rollups (start of its hour), or null with no data */
	latestDataHour: number | null;
	starts: number[];
	groups: { areaCode: string; areaName: string; tools: { toolCode: string; toolName: string; chambers: HeatChamberRow[] }[] }[];
	filters: {
		areas: { code: string; name: string }[];
		recipes: { code: string; name: string; steps: string[] }[];
	};
	applied: { area: string | null; recipe: string | null; step: string | null; stepIds: number[] };
	alarmsByAge: AlarmAges;
	drifting: DriftingChamber[];
	/** whether fleet matching ran for these steps at all (the drift list must not reassure otherwise) */
	fleetRuns: FleetRunSummary;
}

export interface AlarmAges {
	bands: { label: string; count: number }[];
	total: number;
	/** oldest first, at most 12 */
	oldest: {
		id: number;
		chamberCode: string;
		recipeCode: string;
		stepName: string;
		rule: string;
		ruleLabel: string;
		severity: 'warning' | 'alarm';
		openedAt: number;
		worstRatio: number | null;
		worstWaferStepId: number | null;
	}[];
}

export interface DriftingChamber {
	chamberCode: string;
	recipeCode: string;
	stepName: string;
	modifiedZ: number;
	distance: number;
	runAt: number;
	/** the features that separate it most (flagged ones first), at most 3 */
	separating: string[];
}

const AGE_BANDS = [
	{ label: '< 1 h', max: HOUR_MS },
	{ label: '1–8 h', max: 8 * HOUR_MS },
	{ label: '8–24 h', max: 24 * HOUR_MS },
	{ label: '1–3 d', max: 72 * HOUR_MS },
	{ label: '> 3 d', max: Infinity }
];

/**
 * The whole heatmap screen's data for a query: rows, cells, the open-alarm ages and the chambers the
 * latest fleet-matching run flagged.
 *
 * @param q the parsed query ({@link parseHeatmapParams})
 * @param ctx `now` (epoch ms) and the viewer's IANA time zone (day columns start at local midnight)
 * @param k the Knex instance (default: the process's)
 * @returns the view; chambers without data in the chosen steps are left out when a recipe or step is chosen
 */
export async function getHeatmap(q: HeatmapQuery, ctx: { now: number; timeZone: string }, k: Knex = db()): Promise<HeatmapView> {
	const steps = await listRecipeSteps(k);
	const stepIds = selectSteps(steps, q.recipe, q.step);
	const narrowed = q.recipe !== null || q.step !== null;

	const latest = await k('hourly_rollups')
		.modify((qb) => (narrowed ? qb.whereIn('recipe_step_id', stepIds) : qb))
		.max({ h: 'hour_at' })
		.first();
	const latestDataHour = latest?.h == null ? null : Number(latest.h);
	const span = HEAT_WINDOWS[q.window].buckets * HEAT_WINDOWS[q.window].bucketMs;
	let end = ctx.now;
	let anchor: HeatmapView['anchor'] = 'now';
	if (q.end !== null) {
		end = q.end;
		anchor = 'time';
	} else if (latestDataHour !== null && (q.anchor === 'latest' || (q.anchor === 'auto' && latestDataHour + HOUR_MS <= ctx.now - span))) {
		end = Math.min(ctx.now, latestDataHour + HOUR_MS - 1);
		anchor = 'latest';
	}
	const plan = planBuckets(q.window, end, ctx.timeZone);

	const allChambers = await listChambers(k);
	let chambers = q.area ? allChambers.filter((c) => c.areaCode === q.area) : allChambers;
	if (narrowed) {
		const ran = new Set((await k('hourly_rollups').whereIn('recipe_step_id', stepIds).distinct('chamber_id')).map((r) => Number(r.chamber_id)));
		chambers = chambers.filter((c) => ran.has(c.id));
	}
	const chamberIds = chambers.map((c) => c.id);

	const cells = await bucketCells(k, { from: plan.from, to: plan.to, bucketMs: plan.bucketMs, stepIds: narrowed ? stepIds : null, chamberIds: q.area ? chamberIds : null });
	const alarms = await openAlarms(k, narrowed ? stepIds : null);
	const fleet = await latestFleetRun(k, narrowed ? stepIds : null);

	const stepName = new Map(steps.map((s) => [s.id, s]));
	const rows = new Map<number, HeatChamberRow>();
	for (const c of chambers) {
		const flagged = fleet.filter((f) => f.chamberId === c.id && f.flagged).sort((a, b) => b.modifiedZ - a.modifiedZ)[0];
		const own = alarms.filter((a) => a.chamberId === c.id);
		const row: HeatChamberRow = {
			id: c.id,
			code: c.code,
			name: c.name,
			requalify: c.requalifySince === null ? null : { since: c.requalifySince, reason: c.requalifyReason },
			fleet: flagged ? { modifiedZ: flagged.modifiedZ, step: stepLabel(stepName.get(flagged.recipeStepId)), runAt: flagged.runAt } : null,
			openAlarms: own.length,
			cells: plan.starts.map(() => null)
		};
		rows.set(c.id, row);
	}
	const names = await waferNames(k, cells.map((c) => c.worst).filter((x): x is number => x !== null));
	for (const cell of cells) {
		const row = rows.get(cell.chamberId);
		if (!row || cell.b < 0 || cell.b >= plan.starts.length) continue;
		const start = plan.starts[cell.b];
		const stop = start + plan.bucketMs;
		const touching = alarms.filter((a) => a.chamberId === cell.chamberId && a.openedAt < stop && a.lastSeenAt >= start).length;
		row.cells[cell.b] = { n: cell.n, r: cell.r, t2: cell.t2, q: cell.q, worst: cell.worst, worstWafer: cell.worst === null ? null : (names.get(cell.worst) ?? null), beyond: cell.beyond, seasoning: cell.seasoning, alarms: touching };
	}

	const groups: HeatmapView['groups'] = [];
	for (const c of chambers) {
		let g = groups.find((x) => x.areaCode === c.areaCode);
		if (!g) groups.push((g = { areaCode: c.areaCode, areaName: c.areaName, tools: [] }));
		let t = g.tools.find((x) => x.toolCode === c.toolCode);
		if (!t) g.tools.push((t = { toolCode: c.toolCode, toolName: c.toolName, chambers: [] }));
		t.chambers.push(rows.get(c.id)!);
	}

	const areas = [...new Map(allChambers.map((c) => [c.areaCode, { code: c.areaCode, name: c.areaName }])).values()];
	const recipes = [...new Map(steps.map((s) => [s.recipeCode, { code: s.recipeCode, name: s.recipeName, steps: [] as string[] }])).values()];
	for (const s of steps) recipes.find((r) => r.code === s.recipeCode)!.steps.push(s.stepName);

	return {
		window: q.window,
		bucketMs: plan.bucketMs,
		from: plan.from,
		to: plan.to,
		end,
		anchor,
		now: ctx.now,
		latestDataHour,
		starts: plan.starts,
		groups,
		filters: { areas, recipes },
		applied: { area: q.area, recipe: q.recipe, step: q.step, stepIds: narrowed ? stepIds : [] },
		alarmsByAge: alarmAges(alarms.filter((a) => !q.area || chamberIds.includes(a.chamberId)), ctx.now),
		fleetRuns: await fleetRunSummary(narrowed ? stepIds : null, k),
		drifting: fleet
			.filter((f) => f.flagged && (!q.area || chamberIds.includes(f.chamberId)))
			.sort((a, b) => b.modifiedZ - a.modifiedZ)
			.map((f) => {
				const s = stepName.get(f.recipeStepId);
				return {
					chamberCode: f.chamberCode,
					recipeCode: s?.recipeCode ?? '?',
					stepName: s?.stepName ?? '?',
					modifiedZ: f.modifiedZ,
					distance: f.distance,
					runAt: f.runAt,
					separating: f.separating
				};
			})
	};
}

async function waferNames(k: Knex, ids: number[]): Promise<Map<number, string>> {
	const out = new Map<number, string>();
	for (let i = 0; i < ids.length; i += 500) {
		const rows = await k('wafer_steps').whereIn('id', ids.slice(i, i + 500)).select('id', 'wafer_id');
		for (const r of rows) out.set(r.id, r.wafer_id);
	}
	return out;
}

function stepLabel(s: RecipeStepInfo | undefined): string {
	return s ? `${s.recipeCode} ${s.stepName}` : '?';
}

function selectSteps(steps: RecipeStepInfo[], recipe: string | null, step: string | null): number[] {
	return steps.filter((s) => (recipe === null || s.recipeCode === recipe) && (step === null || s.stepName === step)).map((s) => s.id);
}

interface BucketRow {
	chamberId: number;
	b: number;
	n: number;
	r: number | null;
	t2: number | null;
	q: number | null;
	worst: number | null;
	beyond: number;
	seasoning: number;
}

/**
 * Aggregate the rollups into buckets in SQL: per chamber × bucket the wafer count, the worst ratio
 * with the worst wafer-step and its T²/Q ratios (from the bucket's worst hour), and the count of
 * wafer-steps beyond a limit. Bucket index = (hour_at − from) div bucketMs, never negative.
 *
 * SQLite: one GROUP BY with a single max(): SQLite documents that the bare columns of such a query
 * come from the row holding the maximum ("Bare columns in an aggregate query", sqlite.org/lang_select),
 * which gives the worst wafer without a second pass — measured about 3× faster on 1 M wafer-steps than
 * the ROW_NUMBER() form. PostgreSQL has no such rule, so it gets DISTINCT ON … ORDER BY with window sums.
 */
async function bucketCells(
	k: Knex,
	a: { from: number; to: number; bucketMs: number; stepIds: number[] | null; chamberIds: number[] | null }
): Promise<BucketRow[]> {
	if (a.stepIds?.length === 0 || a.chamberIds?.length === 0) return [];
	// Written into the SQL as integer literals, not bound: drivers bind JS numbers as floating point
	// (better-sqlite3 binds REAL), which would turn the bucket index into a fractional division.
	if (![a.from, a.to, a.bucketMs].every(Number.isSafeInteger) || a.bucketMs <= 0) throw new RangeError('bucket edges must be whole milliseconds');
	const where: string[] = [`hour_at >= ${a.from}`, `hour_at < ${a.to}`];
	const binds: number[] = [];
	if (a.stepIds) {
		where.push(`recipe_step_id IN (${a.stepIds.map(() => '?').join(',')})`);
		binds.push(...a.stepIds);
	}
	if (a.chamberIds) {
		where.push(`chamber_id IN (${a.chamberIds.map(() => '?').join(',')})`);
		binds.push(...a.chamberIds);
	}
	const b = `(hour_at - ${a.from}) / ${a.bucketMs}`;
	const sql =
		k.client.config.client === 'pg'
			? `SELECT DISTINCT ON (chamber_id, b) chamber_id, b, n, r, t2, q, worst, beyond, seasoning FROM (
					SELECT chamber_id, ${b} AS b, worst_ratio AS r, worst_t2_ratio AS t2, worst_q_ratio AS q, worst_wafer_step_id AS worst,
						SUM(wafer_count) OVER w AS n, SUM(alarm_wafer_count) OVER w AS beyond, SUM(seasoning_wafer_count) OVER w AS seasoning
					FROM hourly_rollups WHERE ${where.join(' AND ')}
					WINDOW w AS (PARTITION BY chamber_id, ${b})
				) x ORDER BY chamber_id, b, r DESC NULLS LAST`
			: `SELECT chamber_id, ${b} AS b, SUM(wafer_count) AS n, MAX(worst_ratio) AS r, worst_t2_ratio AS t2, worst_q_ratio AS q,
					worst_wafer_step_id AS worst, SUM(alarm_wafer_count) AS beyond, SUM(seasoning_wafer_count) AS seasoning
				FROM hourly_rollups WHERE ${where.join(' AND ')} GROUP BY chamber_id, b`;
	const res = await k.raw(sql, binds);
	// better-sqlite3 returns the rows; pg returns { rows }.
	const rows: Record<string, unknown>[] = Array.isArray(res) ? res : res.rows;
	const num = (v: unknown) => (v === null || v === undefined ? null : Number(v));
	return rows.map((r) => ({
		chamberId: Number(r.chamber_id),
		b: Number(r.b),
		n: Number(r.n),
		r: num(r.r),
		t2: num(r.t2),
		q: num(r.q),
		worst: num(r.worst),
		beyond: Number(r.beyond ?? 0),
		seasoning: Number(r.seasoning ?? 0)
	}));
}

interface OpenAlarm {
	id: number;
	chamberId: number;
	chamberCode: string;
	recipeStepId: number;
	recipeCode: string;
	stepName: string;
	rule: string;
	severity: 'warning' | 'alarm';
	openedAt: number;
	lastSeenAt: number;
	worstRatio: number | null;
	worstWaferStepId: number | null;
}

/** Alarms in state `open` (not yet acknowledged), optionally of some recipe steps only. */
export async function openAlarms(k: Knex, stepIds: number[] | null): Promise<OpenAlarm[]> {
	// eslint-disable-next-line @typescript-eslint/no-explicit-any
	const rows: any[] = await k('alarms as a')
		.join('chambers as c', 'c.id', 'a.chamber_id')
		.join('recipe_steps as s', 's.id', 'a.recipe_step_id')
		.join('recipes as r', 'r.id', 's.recipe_id')
		.where('a.state', 'open')
		.modify((qb) => (stepIds ? qb.whereIn('a.recipe_step_id', stepIds) : qb))
		.orderBy('a.opened_at')
		.select('a.id', 'a.chamber_id', 'c.code as chamber_code', 'a.recipe_step_id', 'r.code as recipe_code', 's.name as step_name', 'a.rule', 'a.severity', 'a.opened_at', 'a.last_seen_at', 'a.worst_ratio', 'a.worst_wafer_step_id');
	return rows.map((r) => ({
		id: r.id,
		chamberId: r.chamber_id,
		chamberCode: r.chamber_code,
		recipeStepId: r.recipe_step_id,
		recipeCode: r.recipe_code,
		stepName: r.step_name,
		rule: r.rule,
		severity: r.severity,
		openedAt: Number(r.opened_at),
		lastSeenAt: Number(r.last_seen_at),
		worstRatio: r.worst_ratio,
		worstWaferStepId: r.worst_wafer_step_id
	}));
}

function alarmAges(alarms: OpenAlarm[], now: number): AlarmAges {
	const bands = AGE_BANDS.map((b) => ({ label: b.label, count: 0 }));
	for (const a of alarms) {
		const age = now - a.openedAt;
		const i = AGE_BANDS.findIndex((b) => age < b.max);
		bands[i].count++;
	}
	return {
		bands,
		total: alarms.length,
		oldest: alarms.slice(0, 12).map((a) => ({
			id: a.id,
			chamberCode: a.chamberCode,
			recipeCode: a.recipeCode,
			stepName: a.stepName,
			rule: a.rule,
			ruleLabel: RULE_LABELS[a.rule as AlarmRule] ?? a.rule,
			severity: a.severity,
			openedAt: a.openedAt,
			worstRatio: a.worstRatio,
			worstWaferStepId: a.worstWaferStepId
		}))
	};
}

interface FleetRow {
	chamberId: number;
	chamberCode: string;
	recipeStepId: number;
	modifiedZ: number;
	distance: number;
	flagged: boolean;
	runAt: number;
	separating: string[];
}

/** Each recipe step's most recent fleet-matching run, one row per chamber. */
export async function latestFleetRun(k: Knex, stepIds: number[] | null): Promise<FleetRow[]> {
	// eslint-disable-next-line @typescript-eslint/no-explicit-any
	const rows: any[] = await k('fleet_matches as f')
		.join('chambers as c', 'c.id', 'f.chamber_id')
		.modify((qb) => (stepIds ? qb.whereIn('f.recipe_step_id', stepIds) : qb))
		.whereRaw('f.run_at = (SELECT MAX(f2.run_at) FROM fleet_matches f2 WHERE f2.recipe_step_id = f.recipe_step_id)')
		.select('f.chamber_id', 'c.code', 'f.recipe_step_id', 'f.modified_z', 'f.distance', 'f.flagged', 'f.run_at', 'f.separating_json');
	return rows.map((r) => ({
		chamberId: r.chamber_id,
		chamberCode: r.code,
		recipeStepId: r.recipe_step_id,
		modifiedZ: r.modified_z,
		distance: r.distance,
		flagged: Boolean(r.flagged),
		runAt: Number(r.run_at),
		separating: topSeparating(r.separating_json)
	}));
}

function topSeparating(json: string): string[] {
	try {
		const list = JSON.parse(json) as { feature: string; flagged?: boolean; modifiedZ?: number }[];
		return [...list]
			.sort((a, b) => Number(Boolean(b.flagged)) - Number(Boolean(a.flagged)) || Math.abs(b.modifiedZ ?? 0) - Math.abs(a.modifiedZ ?? 0))
			.slice(0, 3)
			.map((f) => f.feature);
	} catch {
		return [];
	}
}
