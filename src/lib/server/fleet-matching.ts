/**
 * Fleet matching as a scheduled job: per recipe step, each chamber's last `window` wafers against the
 * active fleet model (pooled golden wafers of all chambers), modified z-scores across chambers, and a
 * `fleet` alarm for a chamber that sits apart (see monitoring/fleet.ts for the method and sources).
 */
import type { Knex } from 'knex';
import { compareChambers, type FleetComparison } from '../monitoring/index.ts';
import { raiseOrExtend } from './alarms.ts';
import { createDraftBaseline, approveBaseline, getActiveFleetBaseline } from './baselines.ts';
import { db } from './db.ts';
import { decodeValues } from './feature-values.ts';
import { getSetting } from './settings.ts';
import { now } from './time.ts';

export interface FleetRunResult {
	recipeStepId: number;
	skipped?: string;
	chambers: number;
	flagged: string[];
	alarmsOpened: number[];
}

/** Build and approve a fleet model for a recipe step from every chamber's golden wafers. */
export async function buildFleetModel(recipeStepId: number, userId: string | null, k: Knex = db()): Promise<number> {
	const version = await k('recipe_steps').where({ id: recipeStepId }).first('feature_set_version');
	const ids = await k('wafer_steps')
		.where({ recipe_step_id: recipeStepId, golden: true, feature_set_version: version?.feature_set_version ?? 1 })
		.pluck('id');
	const draft = await createDraftBaseline(
		{ scope: 'fleet', chamberId: null, recipeStepId, waferStepIds: ids, builtBy: userId, note: 'Fleet model: golden wafers of all chambers, pooled' },
		k
	);
	if (userId) await approveBaseline(draft.id, userId, k);
	return draft.id;
}

export async function runFleetMatching(recipeStepId: number, at: number = now(), k: Knex = db()): Promise<FleetRunResult> {
	const policy = await getSetting('alarm_policy', k);
	const fleet = await getActiveFleetBaseline(recipeStepId, k);
	const result: FleetRunResult = { recipeStepId, chambers: 0, flagged: [], alarmsOpened: [] };
	if (!fleet) return { ...result, skipped: 'no active fleet model for this recipe step' };
	const chambers = await k('wafer_steps as w')
		.join('chambers as c', 'c.id', 'w.chamber_id')
		.where({ 'w.recipe_step_id': recipeStepId, 'w.feature_set_version': fleet.featureSetVersion })
		.andWhere('w.processed_at', '<=', at)
		.distinct('c.id', 'c.code');
	const windows: { id: number; code: string; rows: { id: number; processed_at: number; feature_values: Buffer }[] }[] = [];
	for (const c of chambers) {
		const rows = await k('wafer_steps')
			.where({ chamber_id: c.id, recipe_step_id: recipeStepId, feature_set_version: fleet.featureSetVersion })
			.andWhere('processed_at', '<=', at)
			.orderBy([{ column: 'processed_at', order: 'desc' }, { column: 'id', order: 'desc' }])
			.limit(policy.fleetWindow)
			.select('id', 'processed_at', 'feature_values');
		if (rows.length > 0) windows.push({ id: c.id, code: c.code, rows: rows.reverse() });
	}
	if (windows.length < 3) return { ...result, skipped: `only ${windows.length} chamber(s) ran this step` };
	let cmp: FleetComparison;
	cmp = compareChambers(
		windows.map((w) => ({ chamberId: w.code, golden: [], recent: w.rows.map((r) => decodeValues(r.feature_values)) })),
		{ featureNames: fleet.model.featureNames, model: fleet.model, window: policy.fleetWindow }
	);
	result.chambers = cmp.chambers.length;
	await k.transaction(async (trx) => {
		for (const m of cmp.chambers) {
			const w = windows.find((x) => x.code === m.chamberId)!;
			const last = w.rows[w.rows.length - 1];
			await trx('fleet_matches').insert({
				run_at: at,
				recipe_step_id: recipeStepId,
				chamber_id: w.id,
				fleet_baseline_id: fleet.id,
				wafers: m.wafers,
				window_from: Number(w.rows[0].processed_at),
				window_to: Number(last.processed_at),
				last_wafer_step_id: last.id,
				distance: m.distance,
				modified_z: m.modifiedZ,
				flagged: m.flagged,
				separating_json: JSON.stringify(m.separatingFeatures)
			});
			if (m.flagged) {
				result.flagged.push(m.chamberId);
				if (policy.fleetEnabled) {
					const r = await raiseOrExtend(trx, {
						chamberId: w.id,
						recipeStepId,
						baselineId: fleet.id,
						rule: 'fleet',
						waferStepId: last.id,
						at: Number(last.processed_at),
						ratio: m.modifiedZ / cmp.threshold,
						detail: { modifiedZ: m.modifiedZ, distance: m.distance, separating: m.separatingFeatures.filter((f) => f.flagged).map((f) => f.feature) }
					});
					if (r.opened) result.alarmsOpened.push(r.id);
				}
			}
		}
	});
	return result;
}

export async function runFleetMatchingAll(at: number = now(), k: Knex = db()): Promise<FleetRunResult[]> {
	const steps = await k('recipe_steps').pluck('id');
	const out: FleetRunResult[] = [];
	for (const id of steps) out.push(await runFleetMatching(id, at, k));
	return out;
}
