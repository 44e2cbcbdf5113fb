/** Areas, tools and chambers: the fab's structure as the screens show it. */
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
}

export async function listChambers(k: Knex = db()): Promise<ChamberInfo[]> {
	const rows = await k('chambers as c')
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
			'c.requalify_reason'
		);
	return rows.map((r) => ({
		id: r.id,
		code: r.code,
		name: r.name,
		toolCode: r.tool_code,
		toolName: r.tool_name,
		areaCode: r.area_code,
		areaName: r.area_name,
		requalifySince: r.requalify_since === null ? null : Number(r.requalify_since),
		requalifyReason: r.requalify_reason
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
