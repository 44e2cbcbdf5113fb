/**
 * A file whose every row for a new recipe step is refused leaves no catalog behind: the step (and a
 * recipe it created) is removed in the same transaction, so the next good file for that step fixes
 * the feature set, not the refused one (brief: "no half-written state").
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../../helpers/temp-db.ts';
import { ingestFile } from '../../../src/lib/server/ingest/index.ts';
import { addChambers, count, csv, HEADER, rows, write } from './helpers.ts';

let env: Awaited<ReturnType<typeof useTempDb>>;
beforeAll(async () => {
	env = await useTempDb();
	await addChambers(env.k, ['PM1']);
});
afterAll(() => env.cleanup());

describe('a refused file creates no recipe step', () => {
	it('removes the step, its features and its recipe when none of its rows is stored', async () => {
		// every row names an unknown chamber: each row is refused, the file itself is read to the end
		const file = write(env.dir, 'all-refused.csv', csv(HEADER, rows(3, 0, { chamber: 'NOPE9' })));
		const r = await ingestFile(file, { source: 'upload' });
		expect(r.rows.accepted).toBe(0);
		expect(r.rows.rejected).toBe(3);
		expect(r.created.recipeSteps).toEqual([]);
		expect(r.created.recipes).toEqual([]);
		expect(await count(env.k, 'recipes')).toBe(0);
		expect(await count(env.k, 'recipe_steps')).toBe(0);
		expect(await count(env.k, 'features')).toBe(0);
		expect(await count(env.k, 'ingest_rejections')).toBe(3);
	});

	it('keeps the step when one row is stored', async () => {
		const good = rows(1, 10);
		const bad = rows(2, 11, { chamber: 'NOPE9' });
		const file = write(env.dir, 'one-good.csv', csv(HEADER, [...good, ...bad]));
		const r = await ingestFile(file, { source: 'upload' });
		expect(r.rows.accepted).toBe(1);
		expect(r.created.recipeSteps.length).toBe(1);
		expect(await count(env.k, 'recipe_steps')).toBe(1);
		expect(await count(env.k, 'features')).toBeGreaterThan(0);
	});
});
