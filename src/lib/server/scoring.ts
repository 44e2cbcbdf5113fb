/**
 * Scoring on arrival: the ingest pipeline calls `scoreWaferSteps` inside the transaction that stores
 * the wafer-steps, so a wafer-step is never stored without its scoring state.
 *
 * A wafer-step whose chamber × recipe step has no active baseline is marked `no_baseline` (and shown as
 * such); with an active baseline it is scored, its hourly rollup updated and the alarm rules run.
 */
import type { Knex } from 'knex';

export interface NewWaferStep {
	id: number;
	chamberId: number;
	recipeStepId: number;
	processedAt: number;
	featureSetVersion: number;
	values: Float64Array;
}

export interface ScoringResult {
	scored: number;
	noBaseline: number;
	/** ids of alarms opened (not merely extended) by these wafer-steps */
	alarmsOpened: number[];
}

export async function scoreWaferSteps(trx: Knex.Transaction | Knex, rows: NewWaferStep[]): Promise<ScoringResult> {
	const result: ScoringResult = { scored: 0, noBaseline: 0, alarmsOpened: [] };
	if (rows.length === 0) return result;
	const keys = [...new Set(rows.map((r) => `${r.chamberId}:${r.recipeStepId}`))];
	const active = new Set<string>();
	for (const key of keys) {
		const [chamberId, recipeStepId] = key.split(':').map(Number);
		const b = await trx('baselines')
			.where({ scope: 'chamber', chamber_id: chamberId, recipe_step_id: recipeStepId, status: 'active' })
			.first('id');
		if (b) active.add(key);
	}
	const without = rows.filter((r) => !active.has(`${r.chamberId}:${r.recipeStepId}`)).map((r) => r.id);
	for (let i = 0; i < without.length; i += 500) {
		await trx('wafer_steps').whereIn('id', without.slice(i, i + 500)).update({ scoring_state: 'no_baseline' });
	}
	result.noBaseline = without.length;
	if (active.size > 0) {
		// Scoring against active baselines arrives with the monitoring engine (src/lib/monitoring).
		throw new Error('scoring against an active baseline is not wired yet');
	}
	return result;
}
