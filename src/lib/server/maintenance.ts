/**
 * The maintenance log: wet cleans, part swaps and other PM per chamber. A kind listed in the baseline
 * policy's `requalifyOn` puts the chamber into "requalify": scoring goes on, the chamber is marked
 * everywhere until new baselines are approved (see baselines.ts).
 */
import type { Knex } from 'knex';
import { db } from './db.ts';
import { getSetting } from './settings.ts';
import { now } from './time.ts';

export const MAINTENANCE_KINDS = { wet_clean: 'Wet clean', part_swap: 'Part swap', pm: 'Preventive maintenance', other: 'Other' } as const;
export type MaintenanceKind = keyof typeof MAINTENANCE_KINDS;

export class MaintenanceError extends Error {
	constructor(
		message: string,
		readonly field?: string
	) {
		super(message);
	}
}

export async function logMaintenance(
	e: { chamberId: number; kind: string; at: number; userId: string | null; comment: string },
	k: Knex = db()
): Promise<{ id: number; requalify: boolean }> {
	if (!Object.hasOwn(MAINTENANCE_KINDS, e.kind)) throw new MaintenanceError('Choose a kind of maintenance.', 'kind');
	if (!Number.isFinite(e.at)) throw new MaintenanceError('Give the time of the work.', 'at');
	if (e.at > now() + 10 * 60_000) throw new MaintenanceError('The time is in the future.', 'at');
	if (e.comment.length > 2000) throw new MaintenanceError('Keep the comment under 2,000 characters.', 'comment');
	const policy = await getSetting('baseline_policy', k);
	return k.transaction(async (trx) => {
		const ch = await trx('chambers').where({ id: e.chamberId }).first('id', 'requalify_since');
		if (!ch) throw new MaintenanceError('No such chamber.', 'chamberId');
		const [row] = await trx('maintenance_events')
			.insert({ chamber_id: e.chamberId, kind: e.kind, at: e.at, user_id: e.userId, comment: e.comment.trim() || null, created_at: now() })
			.returning('id');
		const requalify = (policy.requalifyOn as string[]).includes(e.kind);
		if (requalify)
			await trx('chambers')
				.where({ id: e.chamberId })
				.update({ requalify_since: Math.max(e.at, Number(ch.requalify_since ?? 0)), requalify_reason: MAINTENANCE_KINDS[e.kind as MaintenanceKind] });
		return { id: typeof row === 'object' ? row.id : row, requalify };
	});
}

export interface MaintenanceEvent {
	id: number;
	chamberId: number;
	chamberCode: string;
	kind: MaintenanceKind;
	at: number;
	userName: string | null;
	comment: string | null;
}

export async function listMaintenance(q: { chamberId?: number; from?: number; to?: number; limit?: number }, k: Knex = db()): Promise<MaintenanceEvent[]> {
	const query = k('maintenance_events as m').join('chambers as c', 'c.id', 'm.chamber_id').leftJoin('users as u', 'u.id', 'm.user_id');
	if (q.chamberId !== undefined) query.where('m.chamber_id', q.chamberId);
	if (q.from !== undefined) query.andWhere('m.at', '>=', q.from);
	if (q.to !== undefined) query.andWhere('m.at', '<=', q.to);
	const rows = await query
		.orderBy('m.at', 'desc')
		.limit(q.limit ?? 200)
		.select('m.id', 'm.chamber_id', 'c.code', 'm.kind', 'm.at', 'u.display_name', 'm.comment');
	return rows.map((r) => ({ id: r.id, chamberId: r.chamber_id, chamberCode: r.code, kind: r.kind, at: Number(r.at), userName: r.display_name, comment: r.comment }));
}

/**
 * RF-hours since the chamber's last wet clean: Σ rf_on_s over its wafer-steps after the clean ÷ 3600.
 * Null when the data carries no RF time.
 */
export async function rfHoursSinceWetClean(chamberId: number, at: number = now(), k: Knex = db()): Promise<number | null> {
	const clean = await k('maintenance_events').where({ chamber_id: chamberId, kind: 'wet_clean' }).andWhere('at', '<=', at).max({ at: 'at' }).first();
	const since = clean?.at == null ? 0 : Number(clean.at);
	const r = await k('wafer_steps')
		.where({ chamber_id: chamberId })
		.andWhere('processed_at', '>', since)
		.andWhere('processed_at', '<=', at)
		.whereNotNull('rf_on_s')
		.sum({ s: 'rf_on_s' })
		.count({ n: '*' })
		.first();
	if (!r || Number(r.n) === 0) return null;
	return Number(r.s) / 3600;
}
