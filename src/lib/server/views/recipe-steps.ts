/** Recipes and their steps with codes, for filters and labels on the screens. */
import type { Knex } from 'knex';
import { db } from '../db.ts';

export interface RecipeStepInfo {
	id: number;
	recipeCode: string;
	recipeName: string;
	stepName: string;
	position: number;
}

/** Every recipe step, ordered by recipe code and step position. */
export async function listRecipeSteps(k: Knex = db()): Promise<RecipeStepInfo[]> {
	const rows = await k('recipe_steps as s')
		.join('recipes as r', 'r.id', 's.recipe_id')
		.orderBy([{ column: 'r.code' }, { column: 's.position' }, { column: 's.id' }])
		.select('s.id', 'r.code as recipe_code', 'r.name as recipe_name', 's.name as step_name', 's.position');
	return rows.map((r) => ({ id: r.id, recipeCode: r.recipe_code, recipeName: r.recipe_name, stepName: r.step_name, position: r.position }));
}
