/**
 * The metal etch data set (Wise et al. 1999, J. Chemometrics 13:379; see
 * tests/fixtures/ingest/etch-1999/SOURCE.md) was converted into Lockstep's format by someone else:
 * both files must ingest as they are.
 */
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../../helpers/temp-db.ts';
import { ingestFile } from '../../../src/lib/server/ingest/index.ts';
import { decodeValues } from '../../../src/lib/server/feature-values.ts';
import { putSetting } from '../../../src/lib/server/settings.ts';
import { count } from './helpers.ts';

const DIR = path.resolve('tests/fixtures/ingest/etch-1999');
let env: Awaited<ReturnType<typeof useTempDb>>;
beforeAll(async () => {
	env = await useTempDb();
});
afterAll(() => env.cleanup());

describe('etch-1999 fixtures', () => {
	it('an engineer cannot bring an unknown chamber; an admin can when the policy allows it', async () => {
		const refused = await ingestFile(path.join(DIR, 'normal.csv'), { source: 'upload', submitterRole: 'engineer' });
		expect(refused.rows).toMatchObject({ total: 214, accepted: 0, rejected: 214 });
		expect(refused.rejections[0]).toMatchObject({ line: 2, column: 'chamber_id', value: 'E1' });
		expect(await count(env.k, 'chambers')).toBe(0);
		const adminDefault = await ingestFile(path.join(DIR, 'normal.csv'), { source: 'upload', submitterRole: 'admin' });
		expect(adminDefault.rows.accepted).toBe(0); // policy default: refuse
		await putSetting('ingest_policy', { unknownChamber: 'auto_register_for_admins' }, null, env.k);
		const engineer = await ingestFile(path.join(DIR, 'normal.csv'), { source: 'upload', submitterRole: 'engineer' });
		expect(engineer.rows.accepted).toBe(0);
		const admin = await ingestFile(path.join(DIR, 'normal.csv'), { source: 'upload', submitterRole: 'admin' });
		expect(admin.created.chambers).toEqual(['E1']);
		expect(admin.rows).toEqual({ total: 214, accepted: 214, rejected: 0, duplicate: 0 });
	});

	it('normal.csv and faults.csv store 107 + 10 wafers at two steps with 19 sensor features', async () => {
		const faults = await ingestFile(path.join(DIR, 'faults.csv'), { source: 'seed' });
		expect(faults.rows).toEqual({ total: 20, accepted: 20, rejected: 0, duplicate: 0 });
		expect(await count(env.k, 'wafer_steps')).toBe(234);
		const steps = await env.k('recipe_steps').orderBy('name').pluck('name');
		expect(steps).toEqual(['step4', 'step5']);
		// (the engineer's refused attempt above left no step behind, so ids are not assumed)
		const step4 = await env.k('recipe_steps').where({ name: 'step4' }).first('id');
		const feats = await env.k('features').where({ recipe_step_id: step4.id }).orderBy('position');
		expect(feats).toHaveLength(19); // sensors only: no OES channel, so no derived ratio
		expect(feats[0]).toMatchObject({ name: 'bcl3_flow_sccm', kind: 'sensor', unit: 'sccm' });
		// First data row of normal.csv: l2901 step4, bcl3_flow_sccm 751.528, throttle_valve_pos 48.9811.
		const ws = await env.k('wafer_steps').where({ wafer_id: 'l2901', recipe_step_id: step4.id }).first();
		const v = decodeValues(ws.feature_values);
		expect(v[0]).toBe(751.528);
		expect(v[18]).toBe(48.9811);
		expect(Number(ws.processed_at)).toBe(Date.parse('1999-01-04T08:06:00Z'));
	});
});
