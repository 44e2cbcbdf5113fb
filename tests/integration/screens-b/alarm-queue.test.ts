import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../../helpers/temp-db.ts';
import { createFab, insertWaferSteps, latentRows } from '../../helpers/fab.ts';
import { approveBaseline, createDraftBaseline } from '../../../src/lib/server/baselines.ts';
import { scoreWaferSteps } from '../../../src/lib/server/scoring.ts';
import { raiseOrExtend } from '../../../src/lib/server/alarms.ts';
import { createUser } from '../../../src/lib/server/users.ts';
import { causePareto, getAlarm, listQueue, parseQueueFilters, timeToAcknowledge } from '../../../src/lib/server/views/alarm-queue.ts';
import { submitAcknowledge, submitClose } from '../../../src/lib/server/views/alarm-forms.ts';

let env: Awaited<ReturnType<typeof useTempDb>>;
let fab: Awaited<ReturnType<typeof createFab>>;
let engineer: string;
const T0 = Date.UTC(2026, 10, 1);
const HOUR = 3_600_000;

const form = (fields: Record<string, string | string[]>) => {
	const f = new FormData();
	for (const [k, v] of Object.entries(fields)) for (const x of Array.isArray(v) ? v : [v]) f.append(k, x);
	return f;
};

beforeAll(async () => {
	env = await useTempDb();
	// Feature names that the emission-line table knows: N2 337.1 and 357.7 nm and He 587.6 nm among them.
	fab = await createFab(env.k, { chambers: 2, features: 8 });
	const names = ['oes_337.1', 'oes_587.6', 'oes_703.7', 'oes_750.4', 'oes_777.4', 'oes_357.7', 'rf_reflected_w', 'pressure_mtorr'];
	for (let j = 0; j < names.length; j++) await env.k('features').where({ recipe_step_id: fab.recipeStepId, position: j }).update({ name: names[j], kind: j < 6 ? 'oes' : 'sensor' });
	engineer = (await createUser({ username: 'eng', displayName: 'Eng <b>One</b>', password: 'engineer-pass', role: 'engineer' })).id;
	const ch = fab.chamberIds[0];
	const golden = await insertWaferSteps(env.k, { chamberId: ch, recipeStepId: fab.recipeStepId, rows: latentRows(60, 8, 1), start: T0, prefix: 'g', golden: true });
	const d = await createDraftBaseline({ chamberId: ch, recipeStepId: fab.recipeStepId, waferStepIds: golden.map((g) => g.id), components: 3, builtBy: engineer });
	await approveBaseline(d.id, engineer);
	// A wafer with a large shift on two N2 bands (337.1, 357.7): a new direction, so Q leads; the leak
	// rule needs two distinct nitrogen lines.
	const leakRows = latentRows(1, 8, 9, { feature: 0, by: 8 });
	leakRows[0][5] += 8;
	const leak = await insertWaferSteps(env.k, { chamberId: ch, recipeStepId: fab.recipeStepId, rows: leakRows, start: T0 + 48 * HOUR, prefix: 'leak' });
	await env.k.transaction((trx) =>
		scoreWaferSteps(trx, leak.map((w) => ({ id: w.id, chamberId: ch, recipeStepId: fab.recipeStepId, processedAt: w.processedAt, featureSetVersion: 1, values: w.values })))
	);
	// A fleet alarm on the other chamber whose separating features are ordinary lines (not leak-like).
	await raiseOrExtend(env.k, { chamberId: fab.chamberIds[1], recipeStepId: fab.recipeStepId, baselineId: null, rule: 'fleet', waferStepId: null, at: T0 + 50 * HOUR, ratio: 1.4, detail: { separating: ['oes_703.7'] } });
});
afterAll(() => env.cleanup());

describe('alarm queue read model', () => {
	it('parses filters from the URL and reports values it ignored', () => {
		const { filters, ignored } = parseQueueFilters(new URLSearchParams('state=closed&rule=nope&chamber=CH1&age=gt24h&area=%3Cx%3E'));
		expect(filters).toEqual({ state: 'closed', area: null, chamber: 'CH1', rule: null, age: 'gt24h' });
		expect(ignored.sort()).toEqual(['area', 'rule']);
	});

	it('lists live alarms with chamber, step, rule label and the leak-like signature from Q contributions', async () => {
		const { alarms, total } = await listQueue({ state: 'live', area: null, chamber: null, rule: null, age: 'any' }, { at: T0 + 60 * HOUR });
		expect(total).toBe(alarms.length);
		const single = alarms.find((a) => a.rule === 'single');
		expect(single).toBeDefined();
		expect(single!.chamberCode).toBe('CH1');
		expect(single!.ruleLabel).toBe('Wafer far beyond limit');
		expect(single!.worstWaferId).toBe('leak-0');
		expect(single!.leak?.gases).toEqual(['N2']);
		expect(single!.leak?.features).toContain('oes_337.1');
		const fleet = alarms.find((a) => a.rule === 'fleet');
		expect(fleet!.chamberCode).toBe('CH2');
		expect(fleet!.leak).toBeNull();
	});

	it('filters by chamber, rule and age', async () => {
		const at = T0 + 60 * HOUR;
		const ch2 = await listQueue({ state: 'live', area: null, chamber: 'CH2', rule: null, age: 'any' }, { at });
		expect(ch2.alarms.map((a) => a.chamberCode)).toEqual(['CH2']);
		const fleetOnly = await listQueue({ state: 'all', area: null, chamber: null, rule: 'fleet', age: 'any' }, { at });
		expect(fleetOnly.alarms.every((a) => a.rule === 'fleet')).toBe(true);
		// At T0 + 57 h the leak alarms (opened at T0 + 48 h) are 9 h old, the fleet one (T0 + 50 h) 7 h.
		const at57 = T0 + 57 * HOUR;
		const young = await listQueue({ state: 'all', area: null, chamber: null, rule: null, age: 'lt8h' }, { at: at57 });
		expect(young.alarms.map((a) => a.rule)).toEqual(['fleet']);
		const old = await listQueue({ state: 'all', area: null, chamber: null, rule: null, age: 'gt24h' }, { at: at57 });
		expect(old.alarms).toHaveLength(0);
	});

	it('acknowledges several alarms together, all or nothing, and keeps the audit trail', async () => {
		const live = (await listQueue({ state: 'live', area: null, chamber: null, rule: null, age: 'any' })).alarms;
		const ids = live.map((a) => a.id);
		// One unknown id: nothing is acknowledged.
		const bad = await submitAcknowledge(form({ alarmId: [...ids.map(String), '99999'], causeCode: 'HW-LEAK', disposition: 'hold_recommended', comment: 'x' }), engineer);
		expect(bad.ok).toBe(false);
		if (!bad.ok) expect(bad.errors.alarmIds).toMatch(/99999/);
		expect(await env.k('alarms').where({ state: 'acknowledged' })).toHaveLength(0);
		// Missing cause: a field error, nothing written.
		const noCause = await submitAcknowledge(form({ alarmId: ids.map(String), causeCode: '', disposition: 'continue' }), engineer);
		expect(noCause.ok ? null : noCause.errors.causeCode).toMatch(/cause code/);
		const ok = await submitAcknowledge(form({ alarmId: ids.map(String), causeCode: 'HW-LEAK', disposition: 'hold_recommended', comment: '<script>alert(1)</script> door seal' }), engineer);
		expect(ok.ok).toBe(true);
		expect(await env.k('alarms').where({ state: 'acknowledged' })).toHaveLength(ids.length);
		const detail = await getAlarm(ids[0]);
		const ack = detail!.audit.find((e) => e.action === 'acknowledged')!;
		expect(ack).toMatchObject({ causeCode: 'HW-LEAK', disposition: 'hold_recommended', dispositionLabel: 'Hold recommended', userName: 'Eng <b>One</b>' });
		// Stored as typed: escaping is the page's job (Svelte text interpolation), not the database's.
		expect(ack.comment).toBe('<script>alert(1)</script> door seal');
		expect(detail!.alarm.lastAck?.causeCode).toBe('HW-LEAK');
	});

	it('closes one alarm and refuses to close it twice', async () => {
		const id = (await env.k('alarms').where({ rule: 'fleet' }).first('id')).id;
		expect((await submitClose(form({ alarmId: String(id), comment: 'matched after PM' }), engineer)).ok).toBe(true);
		const again = await submitClose(form({ alarmId: String(id) }), engineer);
		expect(again.ok ? null : again.errors.alarmId).toMatch(/closed already/);
		const trail = (await getAlarm(id))!.audit.map((e) => e.action);
		expect(trail).toEqual(['opened', 'acknowledged', 'closed']);
	});

	it('counts causes for the Pareto and the median time to acknowledge per area', async () => {
		const t = Date.now();
		const pareto = await causePareto({ from: t - HOUR, to: t + HOUR });
		const n = Number((await env.k('alarm_actions').where({ action: 'acknowledged' }).count({ n: '*' }).first())!.n);
		expect(pareto).toEqual([{ code: 'HW-LEAK', title: expect.any(String), category: 'hardware', count: n, cumulativeShare: 1 }]);
		const tta = await timeToAcknowledge({ from: T0, to: T0 + 100 * HOUR });
		expect(tta).toHaveLength(1);
		expect(tta[0].acknowledged).toBe(n);
		// Acknowledged "now", opened at the wafers' times in November 2026: the delays are their differences.
		const rows = await env.k('alarms as a').join('alarm_actions as x', 'x.alarm_id', 'a.id').where('x.action', 'acknowledged').select('a.opened_at', 'x.at');
		const delays = rows.map((r) => Number(r.at) - Number(r.opened_at)).sort((a, b) => a - b);
		const mid = delays.length % 2 ? delays[(delays.length - 1) / 2] : (delays[delays.length / 2 - 1] + delays[delays.length / 2]) / 2;
		expect(tta[0].medianMs).toBe(mid);
	});
});
