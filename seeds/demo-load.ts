/**
 * How one day of demo wafer-steps enters Lockstep. Until the ingest pipeline's entry point is wired
 * here, the rows are written with the same catalog and scoring calls the pipeline makes.
 */
import type { Knex } from 'knex';
import type { DemoScenario, DemoWaferStep } from './demo/index.ts';
import { encodeValues } from '../src/lib/server/feature-values.ts';
import { scoreWaferSteps } from '../src/lib/server/scoring.ts';

export type Catalog = Map<string, { recipeStepId: number; rfOnIndex: number }>;

const idOf = (r: unknown) => (typeof r === 'object' && r !== null ? (r as { id: number }).id : (r as number));

async function ensureCatalog(trx: Knex.Transaction, s: DemoScenario, recipe: string, step: string, catalog: Catalog) {
	const key = `${recipe}/${step}`;
	const hit = catalog.get(key);
	if (hit) return hit;
	let r = await trx('recipes').where({ code: recipe }).first('id');
	if (!r) {
		const def = s.recipes.find((x) => x.code === recipe)!;
		r = { id: idOf((await trx('recipes').insert({ code: recipe, name: def.name, chemistry: def.chemistry }).returning('id'))[0]) };
	}
	let st = await trx('recipe_steps').where({ recipe_id: r.id, name: step }).first('id');
	const features = s.features[recipe][step];
	if (!st) {
		const pos = s.recipes.find((x) => x.code === recipe)!.steps.findIndex((x) => x.name === step);
		st = { id: idOf((await trx('recipe_steps').insert({ recipe_id: r.id, name: step, position: pos, feature_set_version: 1 }).returning('id'))[0]) };
		await trx('features').insert(
			features.map((f, i) => ({ recipe_step_id: st!.id, set_version: 1, position: i, name: f.name, kind: f.kind, wavelength_nm: f.wavelengthNm, unit: f.unit }))
		);
	}
	const entry = { recipeStepId: st.id as number, rfOnIndex: features.findIndex((f) => f.name === 'rf_on_s') };
	catalog.set(key, entry);
	return entry;
}

export async function loadDemoDay(k: Knex, s: DemoScenario, rows: DemoWaferStep[], chamberIds: Map<string, number>, catalog: Catalog): Promise<number> {
	if (rows.length === 0) return 0;
	const t = Date.now();
	await k.transaction(async (trx) => {
		const fresh = [];
		for (let i = 0; i < rows.length; i += 200) {
			const chunk = rows.slice(i, i + 200);
			const records = [];
			for (const r of chunk) {
				const c = await ensureCatalog(trx, s, r.recipe, r.step, catalog);
				records.push({
					wafer_id: r.waferId,
					lot_id: r.lotId,
					slot: r.slot,
					chamber_id: chamberIds.get(r.chamberCode)!,
					recipe_step_id: c.recipeStepId,
					processed_at: r.processedAt.getTime(),
					golden: r.golden,
					feature_set_version: 1,
					feature_values: encodeValues(r.values),
					rf_on_s: c.rfOnIndex >= 0 ? r.values[c.rfOnIndex] : null,
					created_at: t
				});
			}
			const ids = await trx('wafer_steps').insert(records).returning('id');
			ids.forEach((id, j) =>
				fresh.push({
					id: idOf(id),
					chamberId: records[j].chamber_id,
					recipeStepId: records[j].recipe_step_id,
					processedAt: records[j].processed_at,
					featureSetVersion: 1,
					values: chunk[j].values
				})
			);
		}
		await scoreWaferSteps(trx, fresh);
	});
	return rows.length;
}
