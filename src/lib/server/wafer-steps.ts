/** Wafer-steps and their catalog: reading the packed vectors back with their feature names. */
import type { Knex } from 'knex';
import { db } from './db.ts';
import { decodeValues } from './feature-values.ts';

export interface CatalogFeature {
	position: number;
	name: string;
	kind: 'oes' | 'sensor' | 'derived';
	wavelengthNm: number | null;
	unit: string | null;
}

export async function getCatalog(recipeStepId: number, setVersion: number, k: Knex = db()): Promise<CatalogFeature[]> {
	const rows = await k('features')
		.where({ recipe_step_id: recipeStepId, set_version: setVersion })
		.orderBy('position')
		.select('position', 'name', 'kind', 'wavelength_nm', 'unit');
	return rows.map((r) => ({ position: r.position, name: r.name, kind: r.kind, wavelengthNm: r.wavelength_nm, unit: r.unit }));
}

export interface StoredWaferStep {
	id: number;
	waferId: string;
	lotId: string;
	slot: number | null;
	chamberId: number;
	recipeStepId: number;
	processedAt: number;
	golden: boolean;
	featureSetVersion: number;
	scoringState: string;
	values: Float64Array;
}

const COLUMNS = [
	'id',
	'wafer_id',
	'lot_id',
	'slot',
	'chamber_id',
	'recipe_step_id',
	'processed_at',
	'golden',
	'feature_set_version',
	'scoring_state',
	'feature_values'
];

// eslint-disable-next-line @typescript-eslint/no-explicit-any
export function toStored(r: any): StoredWaferStep {
	return {
		id: r.id,
		waferId: r.wafer_id,
		lotId: r.lot_id,
		slot: r.slot,
		chamberId: r.chamber_id,
		recipeStepId: r.recipe_step_id,
		processedAt: Number(r.processed_at),
		golden: Boolean(r.golden),
		featureSetVersion: r.feature_set_version,
		scoringState: r.scoring_state,
		values: decodeValues(r.feature_values)
	};
}

export async function getWaferStepsByIds(ids: number[], k: Knex = db()): Promise<StoredWaferStep[]> {
	const out: StoredWaferStep[] = [];
	for (let i = 0; i < ids.length; i += 500) {
		const rows = await k('wafer_steps').whereIn('id', ids.slice(i, i + 500)).select(COLUMNS);
		out.push(...rows.map(toStored));
	}
	return out.sort((a, b) => a.processedAt - b.processedAt || a.id - b.id);
}

export async function getWaferStepsInRange(
	q: { chamberId: number; recipeStepId: number; from?: number; to?: number; goldenOnly?: boolean },
	k: Knex = db()
): Promise<StoredWaferStep[]> {
	const query = k('wafer_steps').where({ chamber_id: q.chamberId, recipe_step_id: q.recipeStepId });
	if (q.from !== undefined) query.andWhere('processed_at', '>=', q.from);
	if (q.to !== undefined) query.andWhere('processed_at', '<=', q.to);
	if (q.goldenOnly) query.andWhere('golden', true);
	const rows = await query.orderBy([{ column: 'processed_at' }, { column: 'id' }]).select(COLUMNS);
	return rows.map(toStored);
}

export async function setGolden(ids: number[], golden: boolean, k: Knex = db()): Promise<void> {
	for (let i = 0; i < ids.length; i += 500) await k('wafer_steps').whereIn('id', ids.slice(i, i + 500)).update({ golden });
}
