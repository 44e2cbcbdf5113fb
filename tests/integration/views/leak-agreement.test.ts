/**
 * The alarm queue, the alarm page, the alarm mail and the wafer page ask one rule whether an alarm is
 * leak-like (monitoring/leak-signature.ts): on the small fab (CH2 gets an invented air leak on its N₂
 * band channels, 337.1 / 357.7 / 380.5 nm, Pearse & Gaydon 1976) plus two non-leak alarms made here —
 * an F 703.7 line risen on CH1 and the N₂ 337.1 band fallen on CH3 — all four say the same thing.
 * The wafer page also shows who acknowledged an alarm, with which cause and when.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../../helpers/temp-db.ts';
import { buildSmallFab, HOUR, WAVELENGTHS } from './small-fab.ts';
import { encodeValues } from '../../../src/lib/server/feature-values.ts';
import { scoreWaferSteps } from '../../../src/lib/server/scoring.ts';
import { acknowledgeAlarms } from '../../../src/lib/server/alarms.ts';
import { getModel } from '../../../src/lib/server/baselines.ts';
import { alarmFacts } from '../../../src/lib/server/mail/alarm-facts.ts';
import { getAlarm, listQueue, type QueueAlarm } from '../../../src/lib/server/views/alarm-queue.ts';
import { getWaferView } from '../../../src/lib/server/views/wafer-view.ts';

let env: Awaited<ReturnType<typeof useTempDb>>;
let fab: Awaited<ReturnType<typeof buildSmallFab>>;
const ci = (code: string) => fab.chambers.findIndex((c) => c.code === code);

/** One extra wafer on a chamber: its golden mean with one channel moved by `sds` golden σ, scored. */
async function excursion(code: string, nm: number, sds: number, at: number): Promise<number> {
	const chamber = fab.chambers[ci(code)];
	const model = await getModel(fab.baselines[ci(code)], env.k);
	const x = Float64Array.from(model.mean);
	const j = WAVELENGTHS.indexOf(nm);
	x[j] += sds * model.sd[j];
	const [r] = await env.k('wafer_steps')
		.insert({ wafer_id: `X${code}-${nm}`, lot_id: 'XL', slot: 1, chamber_id: chamber.id, recipe_step_id: fab.recipeStepId, processed_at: at, golden: false, feature_set_version: 1, feature_values: encodeValues(x), rf_on_s: 60, created_at: at })
		.returning('id');
	const id = typeof r === 'object' ? (r as { id: number }).id : (r as number);
	await env.k.transaction((trx) => scoreWaferSteps(trx, [{ id, chamberId: chamber.id, recipeStepId: fab.recipeStepId, processedAt: at, featureSetVersion: 1, values: x }]));
	return id;
}

let fluorine = 0;
let fallen = 0;
let alarms: QueueAlarm[] = [];

beforeAll(async () => {
	env = await useTempDb();
	fab = await buildSmallFab(env.k);
	fluorine = await excursion('CH1', 703.7, 40, fab.end + HOUR);
	fallen = await excursion('CH3', 337.1, -40, fab.end + HOUR);
	alarms = (await listQueue({ state: 'live', area: null, chamber: null, rule: null, age: 'any' }, { at: fab.end + 2 * HOUR }, env.k)).alarms.filter((a) => a.worstWaferStepId !== null && a.baselineId !== null);
});
afterAll(() => env.cleanup());

const CODE = { N2: 'air', He: 'helium' } as const;

describe('one leak-like rule for the queue, the alarm page, the mail and the wafer page', () => {
	it('has a leak alarm on CH2 and the two non-leak excursions among the live alarms', () => {
		expect(alarms.some((a) => a.chamberCode === 'CH2' && a.leak !== null)).toBe(true);
		expect(alarms.map((a) => a.worstWaferStepId)).toEqual(expect.arrayContaining([fluorine, fallen]));
	});

	it('every live wafer alarm gets the same verdict, gases and channels everywhere', async () => {
		for (const a of alarms) {
			const page = (await getAlarm(a.id, env.k))!.alarm.leak;
			const mail = await alarmFacts({ rule: a.rule, baselineId: a.baselineId, worstWaferStepId: a.worstWaferStepId, detail: a.detail }, env.k);
			const wafer = (await getWaferView(a.worstWaferStepId!, 'complete', env.k))!.leak;
			const queueGases = a.leak?.gases.map((g) => CODE[g]) ?? [];
			expect({ id: a.id, page }).toEqual({ id: a.id, page: a.leak });
			expect({ id: a.id, gases: mail.leakGases }).toEqual({ id: a.id, gases: queueGases });
			expect({ id: a.id, gases: wafer?.gases ?? [], channels: wafer?.channels ?? [] }).toEqual({ id: a.id, gases: queueGases, channels: a.leak?.features ?? [] });
		}
	});

	it('calls the CH2 air leak leak-like on N₂ bands, and neither the risen F line nor the fallen N₂ band', async () => {
		const leak = alarms.find((a) => a.chamberCode === 'CH2' && a.leak)!;
		expect(leak.leak!.gases).toEqual(['N2']);
		expect(leak.leak!.features.every((f) => ['oes_337.1', 'oes_357.7', 'oes_380.5'].includes(f))).toBe(true);
		for (const id of [fluorine, fallen]) {
			expect(alarms.find((a) => a.worstWaferStepId === id)!.leak).toBeNull();
			expect((await getWaferView(id, 'rbc', env.k))!.stats!.state).toBe('alarm');
		}
	});
});

describe('the wafer page shows the acknowledgement of an alarm', () => {
	it('an open alarm has none; after acknowledging it says who, which cause and when', async () => {
		const before = (await getWaferView(fluorine, 'rbc', env.k))!.alarms.filter((a) => a.worstWaferStepId === fluorine);
		expect(before.length).toBeGreaterThan(0);
		expect(before.every((a) => a.state === 'open' && a.acknowledgement === null)).toBe(true);
		await acknowledgeAlarms(env.k, { alarmIds: before.map((a) => a.id), userId: fab.user, causeCode: 'HW-LEAK', disposition: 'hold_recommended', comment: 'checked the F line' });
		const after = (await getWaferView(fluorine, 'rbc', env.k))!.alarms.filter((a) => before.some((b) => b.id === a.id));
		for (const a of after) {
			expect(a.state).toBe('acknowledged');
			expect(a.acknowledgement).toMatchObject({ userName: 'View Engineer', causeCode: 'HW-LEAK', disposition: 'hold_recommended', dispositionLabel: 'Hold recommended', comment: 'checked the F line' });
			expect(a.acknowledgement!.at).toBeGreaterThan(0);
		}
	});
});
