/**
 * Feature-set changes over the real pipeline and a temporary SQLite file: a file with other columns is
 * refused for its step and proposes its columns; an engineer accepts (a new catalog version) or
 * dismisses; the refused file then stores; old-set files are refused; new-set wafers wait for a
 * baseline of their set.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../../helpers/temp-db.ts';
import { ingestFile } from '../../../src/lib/server/ingest/index.ts';
import { acceptFeatureSet, dismissFeatureSet, FeatureSetError, listFeatureSetProposals, recordProposal } from '../../../src/lib/server/ingest/feature-sets.ts';
import { approveBaseline, createDraftBaseline } from '../../../src/lib/server/baselines.ts';
import { addChambers, count, csv, HEADER, row, rows, write } from './helpers.ts';

let env: Awaited<ReturnType<typeof useTempDb>>;
let chamberId: number;
let stepId: number;

// The new set: throttle_valve_pos is gone, a chuck temperature sensor is new (placed last).
const NEW_HEADER = HEADER.filter((c) => c !== 'throttle_valve_pos').concat('chuck_temp_c');
const THROTTLE = HEADER.indexOf('throttle_valve_pos');
const newRow = (i: number) => row(i).filter((_, j) => j !== THROTTLE).concat(String(20 + (i % 7) / 10));

async function user(id: string) {
	await env.k('users').insert({ id, username: id, display_name: `Engineer ${id}`, role: 'engineer', password_hash: 'x', created_at: 0, password_changed_at: 0 });
}
const stepVersion = async () => Number((await env.k('recipe_steps').where({ id: stepId }).first('feature_set_version')).feature_set_version);
const pending = () => listFeatureSetProposals({ status: 'pending' }, 100, env.k);

beforeAll(async () => {
	env = await useTempDb();
	chamberId = (await addChambers(env.k, ['PM1'])).get('PM1')!;
	await user('eng-a');
	await user('eng-b');
	// Set 1 and an approved baseline on it.
	const first = await ingestFile(write(env.dir, 'set1.csv', csv(HEADER, rows(30))), { source: 'inbox' });
	expect(first.rows.accepted).toBe(30);
	stepId = Number((await env.k('recipe_steps').first('id')).id);
	const ids = (await env.k('wafer_steps').select('id')).map((r) => Number(r.id));
	const d = await createDraftBaseline({ chamberId, recipeStepId: stepId, waferStepIds: ids, components: 2, builtBy: 'eng-a' }, env.k);
	await approveBaseline(d.id, 'eng-b', env.k);
});
afterAll(() => env.cleanup());

describe('feature-set changes', () => {
	let proposalId: number;
	let otherId: number;
	let refusedFile: string;

	it('a file with other columns is refused for the step, naming them, and proposes its columns', async () => {
		refusedFile = write(env.dir, 'set2.csv', csv(NEW_HEADER, [100, 101, 102, 103].map(newRow)));
		const r = await ingestFile(refusedFile, { source: 'upload' });
		expect(r.status).toBe('done');
		expect(r.rows).toMatchObject({ total: 4, accepted: 0, rejected: 4 });
		expect(r.rejections[0].reason).toMatch(/feature set 1\) — not in the step's set: chuck_temp_c; missing from this file: throttle_valve_pos/);
		const [p] = await pending();
		proposalId = p.id;
		expect(p).toMatchObject({
			recipeCode: 'OX-ETCH',
			stepName: 'main',
			baseSetVersion: 1,
			currentSetVersion: 1,
			added: ['chuck_temp_c'],
			missing: ['throttle_valve_pos'],
			file: { id: r.fileId, name: 'set2.csv' },
			fileCount: 1,
			rowsRefused: 4,
			outcome: { setVersion: 2, reused: false }
		});
		expect(p.columns).toEqual(NEW_HEADER.slice(7));
		expect(p.activeBaselines).toEqual([{ chamberCode: 'PM1', version: 1, featureSetVersion: 1 }]);
	});

	it('the same columns again are counted on the open proposal, not listed twice', async () => {
		const r = await ingestFile(refusedFile, { source: 'inbox', originalName: 'set2-again.csv' });
		expect(r.status).toBe('done');
		expect(r.rows.rejected).toBe(4);
		const list = await pending();
		expect(list).toHaveLength(1);
		expect(list[0]).toMatchObject({ id: proposalId, fileCount: 2, rowsRefused: 8, lastFile: { id: r.fileId, name: 'set2-again.csv' } });
	});

	it('a proposal goes with its file when the whole file is refused later on', async () => {
		const broken = csv(NEW_HEADER, [newRow(110)]) + 'W9,L9,PM1,OX-ETCH,main,"2026-11-01T06:00:00Z\n';
		const r = await ingestFile(write(env.dir, 'broken.csv', broken), { source: 'inbox' });
		expect(r.status).toBe('rejected');
		expect((await pending())[0]).toMatchObject({ id: proposalId, fileCount: 2 });
	});

	it('another column set is a second proposal', async () => {
		const h = [...HEADER, 'bias_v'];
		await ingestFile(write(env.dir, 'set3.csv', csv(h, [row(120).concat('88')])), { source: 'inbox' });
		const list = await pending();
		expect(list.map((p) => p.id)).toContain(proposalId);
		otherId = list.find((p) => p.id !== proposalId)!.id;
		expect(list.find((p) => p.id === otherId)).toMatchObject({ added: ['bias_v'], missing: [] });
	});

	it('accept is refused for an unknown proposal, and nothing changes', async () => {
		await expect(acceptFeatureSet(9999, 'eng-a', env.k)).rejects.toThrow(/no feature-set proposal #9999/);
		await expect(acceptFeatureSet(0, 'eng-a', env.k)).rejects.toBeInstanceOf(FeatureSetError);
		expect(await stepVersion()).toBe(1);
	});

	it('accept is all or nothing: a failure after the catalog is written leaves set 1 and the proposal pending', async () => {
		await env.k.raw(`CREATE TRIGGER fail_decision BEFORE UPDATE OF status ON feature_set_proposals BEGIN SELECT RAISE(ABORT, 'disk went away'); END`);
		try {
			await expect(acceptFeatureSet(proposalId, 'eng-a', env.k)).rejects.toThrow(/disk went away/);
		} finally {
			await env.k.raw('DROP TRIGGER fail_decision');
		}
		expect(await stepVersion()).toBe(1);
		expect(await env.k('features').where({ recipe_step_id: stepId, set_version: 2 }).count({ n: '*' }).first()).toEqual({ n: 0 });
		expect((await pending()).map((p) => p.id).sort()).toEqual([proposalId, otherId].sort());
	});

	it('accepting writes set 2 from the proposed columns (kinds, units, derived ratios) and records who and when', async () => {
		const r = await acceptFeatureSet(proposalId, 'eng-a', env.k);
		expect(r).toEqual({ recipeStepId: stepId, setVersion: 2, features: 13, reused: false });
		expect(await stepVersion()).toBe(2);
		const cat = await env.k('features').where({ recipe_step_id: stepId, set_version: 2 }).orderBy('position').select('name', 'kind', 'wavelength_nm', 'unit');
		// The ratios follow the measured columns: O 777.4 / Ar 750.4, O 844.6 / Ar 750.4, F 703.7 / Ar 750.4
		// (Coburn & Chen 1980, as catalog.ts derives them for a first file).
		expect(cat.map((c) => c.name)).toEqual([
			...['oes_337.1', 'oes_656.3', 'oes_703.7', 'oes_750.4', 'oes_777.4', 'oes_844.6', 'rf_forward_w', 'rf_reflected_w', 'pressure_mtorr', 'chuck_temp_c'],
			...['ratio_O777_Ar750', 'ratio_O845_Ar750', 'ratio_F704_Ar750']
		]);
		expect(cat.filter((c) => c.kind === 'derived').map((c) => c.name)).toHaveLength(3);
		expect(cat.find((c) => c.name === 'chuck_temp_c')).toEqual({ name: 'chuck_temp_c', kind: 'sensor', wavelength_nm: null, unit: '°C' });
		expect(cat.find((c) => c.name === 'oes_777.4')).toMatchObject({ kind: 'oes', wavelength_nm: 777.4 });
		// set 1 is kept: the wafers stored on it still read with it
		expect(await count(env.k, 'features')).toBe(13 + 13);
		const decided = await env.k('feature_set_proposals').where({ id: proposalId }).first();
		expect(decided).toMatchObject({ status: 'accepted', decided_by: 'eng-a', accepted_set_version: 2 });
		expect(Number(decided.decided_at)).toBeGreaterThan(0);
	});

	it('other proposals measured against set 1 are superseded and cannot be accepted; a decided one cannot be decided again', async () => {
		expect(await pending()).toEqual([]);
		expect((await env.k('feature_set_proposals').where({ id: otherId }).first()).status).toBe('superseded');
		await expect(acceptFeatureSet(otherId, 'eng-a', env.k)).rejects.toThrow(/already superseded/);
		await expect(acceptFeatureSet(proposalId, 'eng-b', env.k)).rejects.toThrow(/already accepted/);
		await expect(dismissFeatureSet(proposalId, 'eng-b', env.k)).rejects.toThrow(/already accepted/);
		expect(await stepVersion()).toBe(2);
	});

	it('a stale pending proposal (made against an older set) is refused', async () => {
		const fileId = Number((await env.k('ingest_files').orderBy('id').first('id')).id);
		const id = await env.k.transaction((trx) =>
			recordProposal(trx, { fileId, recipeStepId: stepId, baseSetVersion: 1, columns: ['oes_777.4'], added: [], missing: [], rows: 1 })
		);
		await expect(acceptFeatureSet(id, 'eng-a', env.k)).rejects.toThrow(/against feature set 1, but the step is now on set 2/);
		expect(await stepVersion()).toBe(2);
		await env.k('feature_set_proposals').where({ id }).update({ status: 'superseded' });
	});

	it('the refused file sent again is stored on set 2, without a baseline until one of set 2 is approved', async () => {
		const r = await ingestFile(refusedFile, { source: 'upload' });
		expect(r.status).toBe('done');
		expect(r.rows).toMatchObject({ total: 4, accepted: 4, rejected: 0 });
		expect(r.waferSteps).toEqual({ scored: 0, noBaseline: 4 });
		const stored = await env.k('wafer_steps').whereIn('wafer_id', ['W00100', 'W00101', 'W00102', 'W00103']).select('feature_set_version', 'scoring_state');
		expect(stored).toEqual(Array(4).fill({ feature_set_version: 2, scoring_state: 'no_baseline' }));
		// the active baseline is still the set-1 one
		expect(await env.k('baselines').where({ status: 'active' }).first('feature_set_version')).toEqual({ feature_set_version: 1 });
	});

	it('a file with the old set is now refused, naming the columns, and proposes; dismissing it changes only the list', async () => {
		const r = await ingestFile(write(env.dir, 'old.csv', csv(HEADER, rows(2, 200))), { source: 'inbox' });
		expect(r.rows).toMatchObject({ accepted: 0, rejected: 2 });
		expect(r.rejections[0].reason).toMatch(/\(feature set 2\) — not in the step's set: throttle_valve_pos; missing from this file: chuck_temp_c/);
		const [p] = await pending();
		expect(p).toMatchObject({ baseSetVersion: 2, added: ['throttle_valve_pos'], missing: ['chuck_temp_c'], rowsRefused: 2 });
		await dismissFeatureSet(p.id, 'eng-b', env.k);
		expect(await pending()).toEqual([]);
		const [d] = await listFeatureSetProposals({ status: 'decided' }, 1, env.k);
		expect(d).toMatchObject({ id: p.id, status: 'dismissed', decidedBy: 'Engineer eng-b' });
		expect(await stepVersion()).toBe(2);
		expect(await env.k('wafer_steps').where('wafer_id', 'W00200').first()).toBeUndefined();
	});

	it('going back to the old columns returns the step to set 1 (no new set), and its active baseline scores them again', async () => {
		const back = write(env.dir, 'back.csv', csv(HEADER, rows(3, 300)));
		expect((await ingestFile(back, { source: 'inbox' })).rows).toMatchObject({ accepted: 0, rejected: 3 });
		const [p] = await pending();
		expect(p).toMatchObject({ baseSetVersion: 2, added: ['throttle_valve_pos'], missing: ['chuck_temp_c'], outcome: { setVersion: 1, reused: true } });
		const setsBefore = await count(env.k, 'features');
		const r = await acceptFeatureSet(p.id, 'eng-a', env.k);
		expect(r).toEqual({ recipeStepId: stepId, setVersion: 1, features: 13, reused: true });
		expect(await stepVersion()).toBe(1);
		expect(await count(env.k, 'features')).toBe(setsBefore); // no catalogue written
		expect((await env.k('feature_set_proposals').where({ id: p.id }).first()).accepted_set_version).toBe(1);
		const again = await ingestFile(back, { source: 'inbox' });
		expect(again.rows).toMatchObject({ total: 3, accepted: 3, rejected: 0 });
		expect(again.waferSteps).toEqual({ scored: 3, noBaseline: 0 });
	});
});
