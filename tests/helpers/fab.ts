/** A small fab written straight into the tables, for tests of what comes after ingest. */
import type { Knex } from 'knex';
import { XSadd as XSAdd } from 'ml-xsadd';
import { encodeValues } from '../../src/lib/server/feature-values.ts';

const idOf = (r: unknown) => (typeof r === 'object' && r !== null ? (r as { id: number }).id : (r as number));

export async function createFab(k: Knex, opts: { chambers: number; features: number }) {
	const [area] = await k('areas').insert({ code: 'AR1', name: 'Test area' }).returning('id');
	const [tool] = await k('tools').insert({ code: 'TL1', name: 'Test tool', area_id: idOf(area) }).returning('id');
	const chamberIds: number[] = [];
	for (let i = 0; i < opts.chambers; i++) {
		const [c] = await k('chambers').insert({ code: `CH${i + 1}`, name: `Chamber ${i + 1}`, tool_id: idOf(tool), created_at: 0 }).returning('id');
		chamberIds.push(idOf(c));
	}
	const [recipe] = await k('recipes').insert({ code: 'RCP', name: 'Test recipe' }).returning('id');
	const [step] = await k('recipe_steps').insert({ recipe_id: idOf(recipe), name: 'main', position: 1 }).returning('id');
	const names = Array.from({ length: opts.features }, (_, j) => `f${j}`);
	await k('features').insert(names.map((name, j) => ({ recipe_step_id: idOf(step), set_version: 1, position: j, name, kind: 'sensor', unit: 'a.u.' })));
	return { chamberIds, recipeStepId: idOf(step), featureNames: names };
}

/** Rows from 3 latent factors plus small noise (seeded). */
export function latentRows(n: number, p: number, seed: number, shift?: { feature: number; by: number }): Float64Array[] {
	const rng = new XSAdd(seed);
	const gauss = () => {
		// Box–Muller on the seeded uniform generator
		const u = Math.max(rng.random(), 1e-12);
		return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * rng.random());
	};
	const loadRng = new XSAdd(12345); // fixed loadings: the same "process" for every call
	const W = Array.from({ length: 3 }, () => Array.from({ length: p }, () => loadRng.random() * 2 - 1));
	const rows: Float64Array[] = [];
	for (let i = 0; i < n; i++) {
		const f = [gauss(), gauss(), gauss()];
		const x = new Float64Array(p);
		for (let j = 0; j < p; j++) x[j] = 10 + f[0] * W[0][j] + f[1] * W[1][j] + f[2] * W[2][j] + 0.1 * gauss();
		if (shift) x[shift.feature] += shift.by;
		rows.push(x);
	}
	return rows;
}

export async function insertWaferSteps(
	k: Knex,
	a: { chamberId: number; recipeStepId: number; rows: Float64Array[]; start: number; everyMs?: number; prefix: string; golden?: boolean }
): Promise<{ id: number; processedAt: number; values: Float64Array }[]> {
	const out: { id: number; processedAt: number; values: Float64Array }[] = [];
	for (let i = 0; i < a.rows.length; i++) {
		const processedAt = a.start + i * (a.everyMs ?? 120_000);
		const [r] = await k('wafer_steps')
			.insert({
				wafer_id: `${a.prefix}-${i}`,
				lot_id: `${a.prefix}-lot`,
				chamber_id: a.chamberId,
				recipe_step_id: a.recipeStepId,
				processed_at: processedAt,
				golden: a.golden ?? false,
				feature_set_version: 1,
				feature_values: encodeValues(a.rows[i]),
				created_at: processedAt
			})
			.returning('id');
		out.push({ id: idOf(r), processedAt, values: a.rows[i] });
	}
	return out;
}
