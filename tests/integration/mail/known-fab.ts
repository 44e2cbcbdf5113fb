/**
 * A small fab with known content for the mail tests (invented): area AR1 with chambers CH1–CH4 and a
 * second area AR2 with CH9 (out of the subscriber's scope). Times are set so that one digest period,
 * (PERIOD_FROM, PERIOD_TO], holds a chosen set of events:
 * - CH1: a baseline from 80 golden wafers, 30 in-control wafers in the period, then 2 wafers with a big
 *   shift on features 4 and 5, named after the N₂ 337.1 and 357.7 nm bands: a Q-led, leak-like alarm;
 * - CH2: an EWMA alarm opened 4 days before the period end (still open), and a run alarm acknowledged
 *   in the period with HW-MFC / hold recommended;
 * - CH3: flagged by fleet matching in the period (CH2 matched, not flagged);
 * - CH4: a wet clean in the period (maintenance done, awaiting requalification), another one before;
 * - CH9: an open alarm, a flagged fleet match and a wet clean, none of which the AR1 subscriber sees.
 */
import type { Knex } from 'knex';
import { acknowledgeAlarms, closeAlarm, raiseOrExtend } from '../../../src/lib/server/alarms.ts';
import { approveBaseline, createDraftBaseline } from '../../../src/lib/server/baselines.ts';
import { logMaintenance } from '../../../src/lib/server/maintenance.ts';
import { scoreWaferSteps } from '../../../src/lib/server/scoring.ts';
import { setClock } from '../../../src/lib/server/time.ts';
import { createUser } from '../../../src/lib/server/users.ts';
import { createFab, insertWaferSteps, latentRows } from '../../helpers/fab.ts';

const HOUR = 3_600_000;
const DAY = 24 * HOUR;
/** Monday 7 Dec 2026, 06:30 in Vienna (CET, UTC+1 in December) = 05:30 UTC. */
export const PERIOD_TO = Date.UTC(2026, 11, 7, 5, 30);
export const PERIOD_FROM = PERIOD_TO - DAY;

const idOf = (r: unknown) => (typeof r === 'object' && r !== null ? (r as { id: number }).id : (r as number));

export async function buildKnownFab(k: Knex) {
	setClock(PERIOD_FROM - 3 * DAY);
	const fab = await createFab(k, { chambers: 4, features: 12 });
	await k('features').where({ recipe_step_id: fab.recipeStepId, position: 4 }).update({ name: 'oes_337.1', kind: 'oes', wavelength_nm: 337.1 });
	await k('features').where({ recipe_step_id: fab.recipeStepId, position: 5 }).update({ name: 'oes_357.7', kind: 'oes', wavelength_nm: 357.7 });
	const [area2] = await k('areas').insert({ code: 'AR2', name: 'Other area' }).returning('id');
	const [tool2] = await k('tools').insert({ code: 'TL9', name: 'Other tool', area_id: idOf(area2) }).returning('id');
	const [ch9] = await k('chambers').insert({ code: 'CH9', name: 'Chamber 9', tool_id: idOf(tool2), created_at: 0 }).returning('id');
	const [ch1, ch2, ch3, ch4] = fab.chamberIds;
	const chamber9 = idOf(ch9);
	const engineer = await createUser({ username: 'eng', displayName: 'Ines Engineer', password: 'engineer-pass', role: 'engineer' }, k);

	const golden = await insertWaferSteps(k, { chamberId: ch1, recipeStepId: fab.recipeStepId, rows: latentRows(80, 12, 1), start: PERIOD_FROM - 3 * DAY, prefix: 'g', golden: true });
	const draft = await createDraftBaseline({ chamberId: ch1, recipeStepId: fab.recipeStepId, waferStepIds: golden.map((g) => g.id), components: 3, builtBy: engineer.id }, k);
	await approveBaseline(draft.id, engineer.id, k);
	const asNew = (ws: { id: number; processedAt: number; values: Float64Array }[], chamberId: number) =>
		ws.map((w) => ({ id: w.id, chamberId, recipeStepId: fab.recipeStepId, processedAt: w.processedAt, featureSetVersion: 1, values: w.values }));

	// In-control wafers in the period; whatever the 1 % false alarms open is closed before the test's own.
	setClock(PERIOD_FROM + 2 * HOUR);
	const quiet = await insertWaferSteps(k, { chamberId: ch1, recipeStepId: fab.recipeStepId, rows: latentRows(30, 12, 2), start: PERIOD_FROM + HOUR, everyMs: 10 * 60_000, prefix: 'n' });
	await k.transaction((trx) => scoreWaferSteps(trx, asNew(quiet, ch1)));
	for (const a of await k('alarms').whereNot('state', 'closed')) await closeAlarm(k, { alarmId: a.id, userId: engineer.id, comment: 'test reset' });

	// The leak-like excursion: two N₂ bands (337.1, 357.7) up by 40 and 25 golden noise levels (a new
	// direction: Q; the leak rule needs two distinct nitrogen lines).
	setClock(PERIOD_FROM + 12 * HOUR);
	const leakRows = latentRows(2, 12, 3, { feature: 4, by: 4 });
	for (const x of leakRows) x[5] += 2.5;
	const shifted = await insertWaferSteps(k, {
		chamberId: ch1,
		recipeStepId: fab.recipeStepId,
		rows: leakRows,
		start: PERIOD_FROM + 11 * HOUR,
		everyMs: 5 * 60_000,
		prefix: 'x'
	});
	const scored = await k.transaction((trx) => scoreWaferSteps(trx, asNew(shifted, ch1)));
	const leakAlarm = await k('alarms').where({ chamber_id: ch1, rule: 'single', state: 'open' }).first();

	// CH2: an old open EWMA alarm and a run alarm acknowledged in the period.
	setClock(PERIOD_TO - 4 * DAY);
	const old = await raiseOrExtend(k, { chamberId: ch2, recipeStepId: fab.recipeStepId, baselineId: null, rule: 'ewma', waferStepId: null, at: PERIOD_TO - 4 * DAY, ratio: 1.3, detail: {} });
	setClock(PERIOD_FROM + 3 * HOUR);
	const run = await raiseOrExtend(k, { chamberId: ch2, recipeStepId: fab.recipeStepId, baselineId: null, rule: 'run', waferStepId: null, at: PERIOD_FROM + 3 * HOUR, ratio: 0.9, detail: {} });
	setClock(PERIOD_FROM + 5 * HOUR);
	await acknowledgeAlarms(k, { alarmIds: [run.id], userId: engineer.id, causeCode: 'HW-MFC', disposition: 'hold_recommended', comment: 'CF4 MFC reads 3 % high' });

	// CH9 (out of scope): an open alarm.
	setClock(PERIOD_FROM + 6 * HOUR);
	const outOfScope = await raiseOrExtend(k, { chamberId: chamber9, recipeStepId: fab.recipeStepId, baselineId: null, rule: 'ewma', waferStepId: null, at: PERIOD_FROM + 6 * HOUR, ratio: 2, detail: {} });

	// Fleet matching results in the period.
	const match = (chamberId: number, flagged: boolean, z: number, at: number, separating: { feature: string; modifiedZ: number; flagged: boolean }[]) => ({
		run_at: at,
		recipe_step_id: fab.recipeStepId,
		chamber_id: chamberId,
		fleet_baseline_id: draft.id,
		wafers: 25,
		window_from: at - DAY,
		window_to: at,
		distance: z / 2,
		modified_z: z,
		flagged,
		separating_json: JSON.stringify(separating.map((s) => ({ ...s, offsetSd: s.modifiedZ / 3 })))
	});
	await k('fleet_matches').insert([
		match(ch3, true, 6.2, PERIOD_FROM + 8 * HOUR, [
			{ feature: 'f7', modifiedZ: 7.1, flagged: true },
			{ feature: 'f2', modifiedZ: 4.0, flagged: true },
			{ feature: 'f3', modifiedZ: 1.0, flagged: false }
		]),
		match(ch2, false, 1.1, PERIOD_FROM + 8 * HOUR, [{ feature: 'f1', modifiedZ: 1.1, flagged: false }]),
		match(chamber9, true, 5.0, PERIOD_FROM + 8 * HOUR, [{ feature: 'f5', modifiedZ: 5, flagged: true }]),
		// before the period: not in this digest
		match(ch4, true, 4.4, PERIOD_FROM - 2 * HOUR, [{ feature: 'f9', modifiedZ: 4.4, flagged: true }])
	]);

	// Maintenance: CH4 wet clean in the period (requalify), one before it; CH9 in the period.
	setClock(PERIOD_TO - HOUR);
	await logMaintenance({ chamberId: ch4, kind: 'wet_clean', at: PERIOD_FROM - 5 * HOUR, userId: engineer.id, comment: 'earlier clean' }, k);
	await logMaintenance({ chamberId: ch4, kind: 'wet_clean', at: PERIOD_FROM + 20 * HOUR, userId: engineer.id, comment: 'window and liner wiped' }, k);
	await logMaintenance({ chamberId: chamber9, kind: 'pm', at: PERIOD_FROM + 20 * HOUR, userId: engineer.id, comment: 'not in scope' }, k);
	setClock(null);

	return {
		fab,
		ch: { ch1, ch2, ch3, ch4, ch9: chamber9 },
		engineer,
		baselineId: draft.id,
		leakAlarmId: leakAlarm?.id as number,
		oldAlarmId: old.id,
		runAlarmId: run.id,
		outOfScopeAlarmId: outOfScope.id,
		shiftedIds: shifted.map((s) => s.id),
		alarmsOpenedByShift: scored.alarmsOpened
	};
}
