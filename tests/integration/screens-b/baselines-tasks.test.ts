import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../../helpers/temp-db.ts';
import { createFab, insertWaferSteps, latentRows } from '../../helpers/fab.ts';
import { approveBaseline, createDraftBaseline } from '../../../src/lib/server/baselines.ts';
import { rescoreSince } from '../../../src/lib/server/scoring.ts';
import { logMaintenance } from '../../../src/lib/server/maintenance.ts';
import { getSetting } from '../../../src/lib/server/settings.ts';
import { createUser } from '../../../src/lib/server/users.ts';
import { getTask, startTask } from '../../../src/lib/server/tasks.ts';
import { baselineWorkspace, candidatesFor, listBaselinePairs } from '../../../src/lib/server/views/baseline-view.ts';

let env: Awaited<ReturnType<typeof useTempDb>>;
let fab: Awaited<ReturnType<typeof createFab>>;
let eng: string;
const T0 = Date.UTC(2026, 10, 1);
const HOUR = 3_600_000;

async function waitFor(id: string) {
	for (let i = 0; i < 200; i++) {
		const t = getTask(id)!;
		if (t.state !== 'running') return t;
		await new Promise((r) => setTimeout(r, 10));
	}
	throw new Error('task did not finish');
}

beforeAll(async () => {
	env = await useTempDb();
	fab = await createFab(env.k, { chambers: 2, features: 6 });
	eng = (await createUser({ username: 'eng', displayName: 'Eng', password: 'engineer-pass', role: 'engineer' })).id;
	await insertWaferSteps(env.k, { chamberId: fab.chamberIds[0], recipeStepId: fab.recipeStepId, rows: latentRows(40, 6, 1), start: T0, prefix: 'a' });
	await insertWaferSteps(env.k, { chamberId: fab.chamberIds[1], recipeStepId: fab.recipeStepId, rows: latentRows(12, 6, 2), start: T0, prefix: 'b' });
});
afterAll(() => env.cleanup());

describe('baseline read model', () => {
	it('lists each chamber × step, without a baseline first', async () => {
		const pairs = await listBaselinePairs();
		expect(pairs.map((p) => [p.chamberCode, p.waferSteps, p.active])).toEqual([
			['CH1', 40, null],
			['CH2', 12, null]
		]);
	});

	it('shows the active version, who built and approved it, and the requalify mark after a wet clean', async () => {
		const ids = (await env.k('wafer_steps').where({ chamber_id: fab.chamberIds[0] }).pluck('id')) as number[];
		const d = await createDraftBaseline({ chamberId: fab.chamberIds[0], recipeStepId: fab.recipeStepId, waferStepIds: ids, components: 2, builtBy: eng });
		let ws = await baselineWorkspace('CH1', fab.recipeStepId);
		expect(ws!.drafts.map((x) => [x.version, x.builtBy, x.summary?.n])).toEqual([[1, 'Eng', 40]]);
		await approveBaseline(d.id, eng);
		ws = await baselineWorkspace('CH1', fab.recipeStepId);
		expect(ws!.active).toMatchObject({ version: 1, n: 40, k: 2, builtBy: 'Eng', approvedBy: 'Eng' });
		expect(ws!.drafts).toHaveLength(0);
		// A wet clean after the approval: this step's baseline predates it, so the step needs requalifying.
		await logMaintenance({ chamberId: fab.chamberIds[0], kind: 'wet_clean', at: Date.now() + 1_000, userId: eng, comment: '' });
		const pair = (await listBaselinePairs({ chamber: 'CH1' }))[0];
		expect(pair.requalify).toBe(true);
		expect(pair.active?.version).toBe(1);
		expect(await baselineWorkspace('NOPE', fab.recipeStepId)).toBeNull();
	});

	it('gives golden candidates of a range with the seasoning reason', async () => {
		await logMaintenance({ chamberId: fab.chamberIds[0], kind: 'wet_clean', at: T0 + 2 * HOUR, userId: eng, comment: '' });
		const { seasoningWafers } = await getSetting('baseline_policy');
		await insertWaferSteps(env.k, { chamberId: fab.chamberIds[0], recipeStepId: fab.recipeStepId, rows: latentRows(seasoningWafers + 5, 6, 3), start: T0 + 3 * HOUR, prefix: 'post' });
		const c = await candidatesFor({ chamberId: fab.chamberIds[0], recipeStepId: fab.recipeStepId, from: T0 + 3 * HOUR, to: T0 + 10 * HOUR });
		expect(c.rows).toHaveLength(seasoningWafers + 5);
		expect(c.truncated).toBe(0);
		expect(c.rows.filter((r) => r.excluded?.startsWith('seasoning'))).toHaveLength(seasoningWafers);
		expect(c.rows.slice(-5).every((r) => r.excluded === null)).toBe(true);
	});
});

describe('background tasks', () => {
	it('runs a rescore in the background with progress, and a second run finishes the same state', async () => {
		const seen: [number, number | null][] = [];
		const t = startTask({ kind: 'rescore', label: 'CH1 test', createdBy: eng }, async (ctx) => {
			const r = await rescoreSince(env.k, { chamberId: fab.chamberIds[0], recipeStepId: fab.recipeStepId, since: T0, chunk: 16 }, (done, total) => {
				seen.push([done, total]);
				ctx.progress(done, total);
			});
			return { rescored: r.rescored };
		});
		expect(t.state).toBe('running');
		const done = await waitFor(t.id);
		const n = Number((await env.k('wafer_steps').where({ chamber_id: fab.chamberIds[0] }).count({ n: '*' }).first())!.n);
		expect(done).toMatchObject({ state: 'done', done: n, total: n, result: { rescored: n } });
		expect(seen.map((s) => s[0])).toEqual([...Array.from({ length: Math.floor(n / 16) }, (_, i) => 16 * (i + 1)), ...(n % 16 ? [n] : [])]);
		const current = Number((await env.k('scores').where({ current: true }).count({ n: '*' }).first())!.n);
		// Again (as after a restart): the same wafers, the same scores, nothing duplicated.
		const again = startTask({ kind: 'rescore', label: 'again', createdBy: eng }, async () => ({ rescored: (await rescoreSince(env.k, { chamberId: fab.chamberIds[0], recipeStepId: fab.recipeStepId, since: T0 })).rescored }));
		await waitFor(again.id);
		expect(Number((await env.k('scores').where({ current: true }).count({ n: '*' }).first())!.n)).toBe(current);
		expect(current).toBe(n);
	});

	it('records a failure with its message, and knows nothing of an unknown id', async () => {
		const t = startTask({ kind: 'rescore', label: 'fails', createdBy: null }, async () => {
			throw new Error('model unreadable');
		});
		expect(await waitFor(t.id)).toMatchObject({ state: 'failed', message: 'model unreadable' });
		expect(getTask('no-such-task')).toBeNull();
	});
});
