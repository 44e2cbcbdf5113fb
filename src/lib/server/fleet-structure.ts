/**
 * Areas, tools and chambers: the fab's structure as the screens show it. Retired entries (an admin's
 * choice: structure-edits.ts) leave the fleet's lists but keep their history, so a retired chamber's
 * own page and its wafers stay readable.
 */
import type { Knex } from 'knex';
import { db } from './db.ts';

export interface ChamberInfo {
	id: number;
	code: string;
	name: string;
	toolCode: string;
	toolName: string;
	areaCode: string;
	areaName: string;
	requalifySince: number | null;
	requalifyReason: string | null;
	retiredAt: number | null;
}

/** The fleet's chambers by area, tool and code; `includeRetired` adds the retired ones. */
export async function listChambers(k: Knex = db(), opts: { includeRetired?: boolean } = {}): Promise<ChamberInfo[]> {
	const q = k('chambers as c')
		.join('tools as t', 't.id', 'c.tool_id')
		.join('areas as a', 'a.id', 't.area_id')
		.orderBy([{ column: 'a.code' }, { column: 't.code' }, { column: 'c.code' }])
		.select(
			'c.id',
			'c.code',
			'c.name',
			't.code as tool_code',
			't.name as tool_name',
			'a.code as area_code',
			'a.name as area_name',
			'c.requalify_since',
			'c.requalify_reason',
			'c.retired_at'
		);
	if (!opts.includeRetired) q.whereNull('c.retired_at');
	const rows = await q;
	return rows.map((r) => ({
		id: r.id,
		code: r.code,
		name: r.name,
		toolCode: r.tool_code,
		toolName: r.tool_name,
		areaCode: r.area_code,
		areaName: r.area_name,
		requalifySince: r.requalify_since === null ? null : Number(r.requalify_since),
		requalifyReason: r.requalify_reason,
		retiredAt: r.retired_at === null ? null : Number(r.retired_at)
	}));
}

export interface FabSummary {
	areas: number;
	tools: number;
	chambers: number;
	recipes: number;
	recipeSteps: number;
	waferSteps: number;
	firstProcessedAt: number | null;
	lastProcessedAt: number | null;
}

export async function fabSummary(k: Knex = db()): Promise<FabSummary> {
	const count = async (table: string) => Number((await k(table).count({ n: '*' }).first())?.n ?? 0);
	const span = await k('wafer_steps').min({ first: 'processed_at' }).max({ last: 'processed_at' }).first();
	return {
		areas: await count('areas'),
		tools: await count('tools'),
		chambers: await count('chambers'),
		recipes: await count('recipes'),
		recipeSteps: await count('recipe_steps'),
		waferSteps: await count('wafer_steps'),
		firstProcessedAt: span?.first == null ? null : Number(span.first),
		lastProcessedAt: span?.last == null ? null : Number(span.last)
	};
}

/** Wafer-steps per chamber over the last `hours` before `until`. */
export async function waferCountsByChamber(until: number, hours: number, k: Knex = db()): Promise<Map<number, number>> {
	const rows: { chamber_id: number; n: number | string }[] = await k('wafer_steps')
		.where('processed_at', '>', until - hours * 3_600_000)
		.andWhere('processed_at', '<=', until)
		.groupBy('chamber_id')
		.select('chamber_id', k.raw('count(*) as n'));
	return new Map(rows.map((r) => [Number(r.chamber_id), Number(r.n)]));
}

export interface StructureArea {
	code: string;
	name: string;
	retiredAt: number | null;
}
export interface StructureTool extends StructureArea {
	areaCode: string;
}
export interface StructureChamber extends StructureArea {
	toolCode: string;
	createdAt: number;
	/** wafer-steps stored for the chamber, and the latest one's time */
	waferSteps: number;
	lastWaferAt: number | null;
}
export interface Structure {
	areas: StructureArea[];
	tools: StructureTool[];
	chambers: StructureChamber[];
}

/** The whole structure, retired entries included, for the admin page and the API. */
export async function listStructure(k: Knex = db()): Promise<Structure> {
	const ms = (v: unknown) => (v === null || v === undefined ? null : Number(v));
	const areas = await k('areas').orderBy('code').select('code', 'name', 'retired_at');
	const tools = await k('tools as t').join('areas as a', 'a.id', 't.area_id').orderBy('t.code').select('t.code', 't.name', 't.retired_at', 'a.code as area_code');
	const counts: { chamber_id: number; n: number | string; last: number | string | null }[] = await k('wafer_steps')
		.groupBy('chamber_id')
		.select('chamber_id', k.raw('count(*) as n'), k.raw('max(processed_at) as last'));
	const byChamber = new Map(counts.map((c) => [Number(c.chamber_id), c]));
	const chambers = await k('chambers as c')
		.join('tools as t', 't.id', 'c.tool_id')
		.orderBy('c.code')
		.select('c.id', 'c.code', 'c.name', 'c.retired_at', 'c.created_at', 't.code as tool_code');
	return {
		areas: areas.map((a) => ({ code: a.code, name: a.name, retiredAt: ms(a.retired_at) })),
		tools: tools.map((t) => ({ code: t.code, name: t.name, retiredAt: ms(t.retired_at), areaCode: t.area_code })),
		chambers: chambers.map((c) => {
			const n = byChamber.get(Number(c.id));
			return {
				code: c.code,
				name: c.name,
				retiredAt: ms(c.retired_at),
				toolCode: c.tool_code,
				createdAt: Number(c.created_at),
				waferSteps: Number(n?.n ?? 0),
				lastWaferAt: ms(n?.last)
			};
		})
	};
}
