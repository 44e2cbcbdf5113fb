import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../../helpers/temp-db.ts';
import { createFab, insertWaferSteps, latentRows } from '../../helpers/fab.ts';
import { addCauseCode, listCauseCodes, renameCauseCode, setCauseCodeActive } from '../../../src/lib/server/cause-codes.ts';
import { acknowledgeAlarms, raiseOrExtend } from '../../../src/lib/server/alarms.ts';
import { logMaintenance } from '../../../src/lib/server/maintenance.ts';
import { BaselinePolicy, putSetting } from '../../../src/lib/server/settings.ts';
import { createUser } from '../../../src/lib/server/users.ts';
import { policyFromForm, policyState } from '../../../src/lib/server/views/policy-view.ts';
import { chamberUpkeep, maintenanceLog } from '../../../src/lib/server/views/maintenance-view.ts';
import { queueOptions } from '../../../src/lib/server/views/alarm-queue.ts';

let env: Awaited<ReturnType<typeof useTempDb>>;
let fab: Awaited<ReturnType<typeof createFab>>;
let admin: string;
const T0 = Date.UTC(2026, 10, 1);
const HOUR = 3_600_000;

beforeAll(async () => {
	env = await useTempDb();
	fab = await createFab(env.k, { chambers: 2, features: 4 });
	admin = (await createUser({ username: 'adm', displayName: 'Admin', password: 'admin-password', role: 'admin' })).id;
});
afterAll(() => env.cleanup());

describe('cause codes', () => {
	it('adds a code with validation and refuses a duplicate', async () => {
		expect(await addCauseCode({ code: 'bad code', title: '', category: 'nope' })).toEqual({
			ok: false,
			errors: { code: expect.stringMatching(/capital letters/), title: expect.any(String), category: expect.any(String) }
		});
		const r = await addCauseCode({ code: 'hw-pump', title: 'Dry pump degrading', category: 'hardware' });
		expect(r.ok).toBe(true);
		expect((await addCauseCode({ code: 'HW-PUMP', title: 'Again', category: 'hardware' })).ok).toBe(false);
		expect((await listCauseCodes()).find((c) => c.code === 'HW-PUMP')).toMatchObject({ title: 'Dry pump degrading', active: true, uses: 0 });
	});

	it('renames, retires (hidden from the acknowledge list, kept in the history) and restores', async () => {
		const c = (await listCauseCodes()).find((x) => x.code === 'HW-PUMP')!;
		expect(await renameCauseCode(c.id, { title: '  Dry pump wearing  ', category: 'consumable' })).toEqual({ ok: true });
		const [alarm] = [await raiseOrExtend(env.k, { chamberId: fab.chamberIds[0], recipeStepId: fab.recipeStepId, baselineId: null, rule: 'fleet', waferStepId: null, at: T0, ratio: 2, detail: {} })];
		await acknowledgeAlarms(env.k, { alarmIds: [alarm.id], userId: admin, causeCode: 'HW-PUMP', disposition: 'continue', comment: '' });
		expect(await setCauseCodeActive(c.id, false)).toEqual({ ok: true });
		expect((await queueOptions()).causeCodes.map((x) => x.code)).not.toContain('HW-PUMP');
		const listed = (await listCauseCodes()).find((x) => x.code === 'HW-PUMP')!;
		expect(listed).toMatchObject({ title: 'Dry pump wearing', category: 'consumable', active: false, uses: 1 });
		await expect(acknowledgeAlarms(env.k, { alarmIds: [alarm.id], userId: admin, causeCode: 'HW-PUMP', disposition: 'continue', comment: '' })).rejects.toThrow(/cause code/);
		expect(await setCauseCodeActive(c.id, true)).toEqual({ ok: true });
	});

	it('keeps at least one active code', async () => {
		const all = await listCauseCodes();
		for (const c of all.slice(1)) await setCauseCodeActive(c.id, false);
		expect(await setCauseCodeActive(all[0].id, false)).toEqual({ ok: false, errors: { id: expect.stringMatching(/at least one/) } });
		for (const c of all) await setCauseCodeActive(c.id, true);
	});
});

describe('policy forms', () => {
	it('turns form fields into typed values and lets validation name the bad field', async () => {
		const f = new FormData();
		f.set('singleEnabled', 'on');
		f.set('runK', '3');
		f.set('runM', 'five');
		f.set('ewmaLambda', '0.2');
		f.set('ewmaL', '3');
		f.set('fleetWindow', '25');
		const value = policyFromForm(f, { booleans: ['singleEnabled', 'runEnabled', 'ewmaEnabled', 'fleetEnabled'], numbers: ['runK', 'runM', 'ewmaLambda', 'ewmaL', 'fleetWindow'] });
		expect(value).toMatchObject({ singleEnabled: true, runEnabled: false, runK: 3, runM: 'five' });
		const r = await putSetting('alarm_policy', value, admin);
		expect(r.ok).toBe(false);
		if (!r.ok) expect(Object.keys(r.errors)).toEqual(['runM']);
		expect((await policyState('alarm_policy')).stored).toBe(false); // nothing half-written
	});

	it('reports who changed a policy, and a stored value that no longer validates', async () => {
		await putSetting('baseline_policy', { fourEyes: true }, admin);
		expect(await policyState('baseline_policy')).toMatchObject({ stored: true, fellBack: false, updatedBy: 'Admin', value: { fourEyes: true, seasoningWafers: BaselinePolicy.parse({}).seasoningWafers } });
		await env.k('settings').where({ key: 'baseline_policy' }).update({ value_json: '{"alpha": 7}' });
		expect(await policyState('baseline_policy')).toMatchObject({ fellBack: true, value: { fourEyes: false, alpha: BaselinePolicy.parse({}).alpha } });
	});
});

describe('maintenance read model', () => {
	it('lists chambers with requalify state, last wet clean, RF-hours and wafers since', async () => {
		await putSetting('baseline_policy', {}, admin);
		const ch = fab.chamberIds[0];
		const ws = await insertWaferSteps(env.k, { chamberId: ch, recipeStepId: fab.recipeStepId, rows: latentRows(6, 4, 1), start: T0 + 2 * HOUR, prefix: 'w' });
		// 90 s of RF per wafer-step: 4 wafers after the clean → 360 s = 0.1 h.
		await env.k('wafer_steps').whereIn('id', ws.map((w) => w.id)).update({ rf_on_s: 90 });
		await logMaintenance({ chamberId: ch, kind: 'wet_clean', at: T0 + 2 * HOUR + 150_000, userId: admin, comment: 'scheduled' });
		await logMaintenance({ chamberId: fab.chamberIds[1], kind: 'pm', at: T0 + HOUR, userId: admin, comment: 'filters' });
		const upkeep = await chamberUpkeep();
		const a = upkeep.find((u) => u.code === 'CH1')!;
		expect(a.requalifySince).toBe(T0 + 2 * HOUR + 150_000);
		expect(a.requalifyReason).toBe('Wet clean');
		expect(a.wafersSinceClean).toBe(4);
		expect(a.rfHours).toBeCloseTo(0.1, 12);
		const b = upkeep.find((u) => u.code === 'CH2')!;
		expect(b).toMatchObject({ requalifySince: null, lastWetCleanAt: null, rfHours: null });
	});

	it('filters the log by chamber, kind and time', async () => {
		expect((await maintenanceLog({ chamber: null, kind: null, from: null, to: null })).total).toBe(2);
		expect((await maintenanceLog({ chamber: 'CH2', kind: null, from: null, to: null })).entries.map((e) => e.kindLabel)).toEqual(['Preventive maintenance']);
		expect((await maintenanceLog({ chamber: null, kind: 'wet_clean', from: null, to: null })).entries.map((e) => e.chamberCode)).toEqual(['CH1']);
		expect((await maintenanceLog({ chamber: null, kind: null, from: T0 + 2 * HOUR, to: null })).entries.map((e) => e.chamberCode)).toEqual(['CH1']);
	});
});
