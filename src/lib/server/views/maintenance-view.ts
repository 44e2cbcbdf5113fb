/**
 * Read model of the maintenance screen: each chamber's state (requalify, last wet clean, RF-hours
 * since it) and the filtered log. Logging goes through maintenance.ts.
 */
import type { Knex } from 'knex';
import { db } from '../db.ts';
import { listChambers } from '../fleet-structure.ts';
import { MAINTENANCE_KINDS, rfHoursSinceWetClean, type MaintenanceKind } from '../maintenance.ts';
import { now } from '../time.ts';

export interface ChamberUpkeep {
	id: number;
	code: string;
	toolCode: string;
	areaCode: string;
	areaName: string;
	requalifySince: number | null;
	requalifyReason: string | null;
	lastWetCleanAt: number | null;
	lastEventAt: number | null;
	rfHours: number | null;
	wafersSinceClean: number;
}

export async function chamberUpkeep(k: Knex = db()): Promise<ChamberUpkeep[]> {
	const chambers = await listChambers(k);
	const cleans = new Map<number, number>(
		(await k('maintenance_events').where({ kind: 'wet_clean' }).groupBy('chamber_id').select('chamber_id', k.raw('max(at) as at'))).map((r) => [r.chamber_id, Number(r.at)])
	);
	const last = new Map<number, number>((await k('maintenance_events').groupBy('chamber_id').select('chamber_id', k.raw('max(at) as at'))).map((r) => [r.chamber_id, Number(r.at)]));
	const t = now();
	const out: ChamberUpkeep[] = [];
	for (const c of chambers) {
		const cleanAt = cleans.get(c.id) ?? null;
		const wafers = Number(
			(await k('wafer_steps').where({ chamber_id: c.id }).andWhere('processed_at', '>', cleanAt ?? 0).countDistinct({ n: 'wafer_id' }).first())?.n ?? 0
		);
		out.push({
			id: c.id,
			code: c.code,
			toolCode: c.toolCode,
			areaCode: c.areaCode,
			areaName: c.areaName,
			requalifySince: c.requalifySince,
			requalifyReason: c.requalifyReason,
			lastWetCleanAt: cleanAt,
			lastEventAt: last.get(c.id) ?? null,
			rfHours: await rfHoursSinceWetClean(c.id, t, k),
			wafersSinceClean: wafers
		});
	}
	return out;
}

export interface LogFilters {
	chamber: string | null;
	kind: MaintenanceKind | null;
	from: number | null;
	to: number | null;
}

export interface LogEntry {
	id: number;
	chamberCode: string;
	kind: MaintenanceKind;
	kindLabel: string;
	at: number;
	userName: string | null;
	comment: string | null;
	createdAt: number;
}

export async function maintenanceLog(f: LogFilters, limit = 300, k: Knex = db()): Promise<{ entries: LogEntry[]; total: number }> {
	const q = k('maintenance_events as m').join('chambers as c', 'c.id', 'm.chamber_id').leftJoin('users as u', 'u.id', 'm.user_id');
	if (f.chamber) q.where('c.code', f.chamber);
	if (f.kind) q.where('m.kind', f.kind);
	if (f.from !== null) q.where('m.at', '>=', f.from);
	if (f.to !== null) q.where('m.at', '<', f.to);
	const total = Number((await q.clone().count({ n: '*' }).first())?.n ?? 0);
	const rows = await q
		.orderBy([{ column: 'm.at', order: 'desc' }, { column: 'm.id', order: 'desc' }])
		.limit(limit)
		.select('m.id', 'c.code', 'm.kind', 'm.at', 'u.display_name', 'm.comment', 'm.created_at');
	return {
		total,
		entries: rows.map((r) => ({
			id: r.id,
			chamberCode: r.code,
			kind: r.kind,
			kindLabel: MAINTENANCE_KINDS[r.kind as MaintenanceKind] ?? r.kind,
			at: Number(r.at),
			userName: r.display_name,
			comment: r.comment,
			createdAt: Number(r.created_at)
		}))
	};
}
