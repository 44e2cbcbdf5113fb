/**
 * An in-control fleet at a real chamber's pace, generated here (not by the demo generator), run
 * through the real scoring and alarm pipeline on an empty database: golden wafers → draft → approve →
 * hourly batches scored as ingest scores them (scoreWaferSteps inside the storing transaction).
 *
 * The process: each wafer-step is 10 + W·f + e over p features, with 3 latent factors f and noise e
 * (sd 0.1). Wafers come in lots of 25; each lot carries its own offset on the factors (sd 0.35 of a
 * factor's sd), which makes successive wafers correlated as wafers of one lot are (lot-to-lot
 * autocorrelation, common practice). Nothing drifts: every alarm raised here is a false alarm.
 *
 * Before the baseline, golden × 8 wafers run with no baseline; every 8th is the golden set.
 *
 * Used by tests/integration/alarm-volume.test.ts (a CI-sized run) and bench/alarm-volume.ts (a longer
 * run with printed figures, before and after). Only APIs that predate the alarm episodes are called,
 * so the same file measures the old rules too.
 */
import type { Knex } from 'knex';
import { XSadd as XSAdd } from 'ml-xsadd';
import { encodeValues } from '../../src/lib/server/feature-values.ts';
import { approveBaseline, createDraftBaseline } from '../../src/lib/server/baselines.ts';
import { scoreWaferSteps } from '../../src/lib/server/scoring.ts';
import { acknowledgeAlarms } from '../../src/lib/server/alarms.ts';

const idOf = (r: unknown) => (typeof r === 'object' && r !== null ? (r as { id: number }).id : (r as number));
const HOUR = 3_600_000;
/** One golden wafer in this many (common practice: a couple a lot). */
const GOLDEN_EVERY = 8;

export interface VolumeOptions {
	chambers: number;
	/** features of each recipe step */
	steps: number[];
	wafersPerHour: number;
	hours: number;
	golden: number;
	seed: number;
	start?: number;
}

export interface VolumeFab {
	chamberIds: number[];
	stepIds: number[];
	/** generator state per chamber × step, to go on producing wafers */
	streams: Map<string, Stream>;
	next: number;
}

interface Stream {
	chamberId: number;
	stepId: number;
	p: number;
	W: number[][];
	rng: XSAdd;
	lotOffset: number[];
	inLot: number;
	lot: number;
	serial: number;
}

function gauss(rng: XSAdd): number {
	// Box–Muller on the seeded uniform generator
	const u = Math.max(rng.random(), 1e-12);
	return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * rng.random());
}

/** One wafer's values; `shift` adds to some features (a fault). */
function nextRow(s: Stream, shift?: { features: number[]; by: number }): Float64Array {
	if (s.inLot === 0) {
		s.lotOffset = [0, 1, 2].map(() => Number(process.env.LOTSD ?? 0.35) * gauss(s.rng));
		s.lot++;
	}
	s.inLot = (s.inLot + 1) % 25;
	const f = s.lotOffset.map((o) => o + gauss(s.rng));
	const x = new Float64Array(s.p);
	for (let j = 0; j < s.p; j++) x[j] = 10 + f[0] * s.W[0][j] + f[1] * s.W[1][j] + f[2] * s.W[2][j] + 0.1 * gauss(s.rng);
	if (shift) for (const j of shift.features) x[j] += shift.by;
	return x;
}

async function insertRows(k: Knex, s: Stream, rows: Float64Array[], times: number[], golden: boolean) {
	const data = rows.map((values, i) => {
		const id = s.serial++;
		return {
			wafer_id: `V${s.chamberId}-${s.stepId}-${id}`,
			lot_id: `L${s.chamberId}-${s.lot}`,
			chamber_id: s.chamberId,
			recipe_step_id: s.stepId,
			processed_at: times[i],
			golden,
			feature_set_version: 1,
			feature_values: encodeValues(values),
			created_at: times[i]
		};
	});
	const ids: number[] = [];
	for (let i = 0; i < data.length; i += 200) ids.push(...(await k('wafer_steps').insert(data.slice(i, i + 200)).returning('id')).map(idOf));
	return ids.map((id, i) => ({ id, chamberId: s.chamberId, recipeStepId: s.stepId, processedAt: times[i], featureSetVersion: 1, values: rows[i] }));
}

/** Create the fab, its golden wafers and approved baselines (one per chamber × step). */
export async function buildVolumeFab(k: Knex, o: VolumeOptions, userIds: [string, string]): Promise<VolumeFab> {
	const start = o.start ?? Date.UTC(2026, 9, 1);
	const [area] = await k('areas').insert({ code: 'VA', name: 'Volume area' }).returning('id');
	const [tool] = await k('tools').insert({ code: 'VT', name: 'Volume tool', area_id: idOf(area) }).returning('id');
	const chamberIds: number[] = [];
	for (let i = 0; i < o.chambers; i++)
		chamberIds.push(idOf((await k('chambers').insert({ code: `VC${i + 1}`, name: `Volume chamber ${i + 1}`, tool_id: idOf(tool), created_at: 0 }).returning('id'))[0]));
	const [recipe] = await k('recipes').insert({ code: 'VR', name: 'Volume recipe' }).returning('id');
	const stepIds: number[] = [];
	for (let s = 0; s < o.steps.length; s++) {
		const stepId = idOf((await k('recipe_steps').insert({ recipe_id: idOf(recipe), name: `step${s + 1}`, position: s + 1 }).returning('id'))[0]);
		stepIds.push(stepId);
		await k('features').insert(Array.from({ length: o.steps[s] }, (_, j) => ({ recipe_step_id: stepId, set_version: 1, position: j, name: `s${s + 1}f${j}`, kind: 'sensor', unit: 'a.u.' })));
	}
	const streams = new Map<string, Stream>();
	const spacing = HOUR / o.wafersPerHour;
	let seed = o.seed;
	for (const chamberId of chamberIds)
		for (let s = 0; s < stepIds.length; s++) {
			const loads = new XSAdd(1000 + s); // one process per step, shared by the fleet
			const p = o.steps[s];
			const st: Stream = {
				chamberId,
				stepId: stepIds[s],
				p,
				W: [0, 1, 2].map(() => Array.from({ length: p }, () => loads.random() * 2 - 1)),
				rng: new XSAdd(seed++),
				lotOffset: [0, 0, 0],
				inLot: 0,
				lot: 0,
				serial: 0
			};
			streams.set(`${chamberId}:${stepIds[s]}`, st);
			// Production before the baseline; every GOLDEN_EVERY-th wafer is picked as golden, spread over
			// many lots as engineers pick them (the baseline's ACF then comes from the consecutive wafers).
			const rows = Array.from({ length: o.golden * GOLDEN_EVERY }, () => nextRow(st));
			const times = rows.map((_, i) => start + i * spacing);
			const ws = await insertRows(k, st, rows, times, false);
			await k.transaction((trx) => scoreWaferSteps(trx, ws)); // no baseline yet: no_baseline
			const golden = ws.filter((_, i) => i % GOLDEN_EVERY === GOLDEN_EVERY - 1).map((w) => w.id);
			await k('wafer_steps').whereIn('id', golden).update({ golden: true });
			const d = await createDraftBaseline({ chamberId, recipeStepId: stepIds[s], waferStepIds: golden, components: 3, builtBy: userIds[0] }, k);
			await approveBaseline(d.id, userIds[1], k);
		}
	return { chamberIds, stepIds, streams, next: start + o.golden * GOLDEN_EVERY * spacing };
}

/** Produce `hours` of wafers for every chamber × step, scored in hourly batches. Returns the wafer-steps judged. */
export async function runHours(k: Knex, fab: VolumeFab, hours: number, wafersPerHour: number): Promise<number> {
	const spacing = HOUR / wafersPerHour;
	let n = 0;
	for (let h = 0; h < hours; h++) {
		const times = Array.from({ length: wafersPerHour }, (_, i) => fab.next + i * spacing);
		for (const s of fab.streams.values()) {
			const rows = times.map(() => nextRow(s));
			await k.transaction(async (trx) => {
				const ws = await insertRows(trx, s, rows, times, false);
				await scoreWaferSteps(trx, ws);
			});
			n += rows.length;
		}
		fab.next += HOUR;
	}
	return n;
}

/** Alarms opened per rule (all are false alarms on an in-control fleet). */
export async function alarmCounts(k: Knex): Promise<Record<string, number>> {
	const rows = (await k('alarms').groupBy('rule').select('rule').count({ n: '*' })) as { rule: string; n: number | string }[];
	return Object.fromEntries(rows.map((r) => [r.rule, Number(r.n)]));
}

/**
 * The fault check: on one chamber × step, a short excursion is planted (a gross wafer, then 6 wafers
 * a little off on features 0–2) and every live alarm is acknowledged as a statistical false alarm;
 * 5 in-control wafers follow, then a step fault on features 4–6 starts, while those acknowledged
 * alarms are still live. Returns the wafers from the
 * fault's onset to the first alarm opened at or after it (null: none within `maxWafers`).
 */
export async function faultAfterFalseAlarm(
	k: Knex,
	fab: VolumeFab,
	o: { chamberId: number; stepId: number; userId: string; shift: number; maxWafers: number; wafersPerHour: number }
): Promise<{ wafers: number | null; acknowledged: number[]; liveRulesAtOnset: string[]; openedAfter: { id: number; rule: string }[]; ratios: number[] }> {
	const s = fab.streams.get(`${o.chamberId}:${o.stepId}`)!;
	const spacing = HOUR / o.wafersPerHour;
	const one = async (row: Float64Array) => {
		const t = fab.next;
		fab.next += spacing;
		return k.transaction(async (trx) => {
			const ws = await insertRows(trx, s, [row], [t], false);
			await scoreWaferSteps(trx, ws);
			return ws[0];
		});
	};
	// The false alarm: one gross wafer, then a few wafers a little off on other features (enough for
	// the run and drift rules too); the engineer acknowledges every live alarm as a statistical false alarm.
	const spike = nextRow(s);
	for (let j = 0; j < 3; j++) spike[j] += 3;
	await one(spike);
	for (let i = 0; i < 6; i++) await one(nextRow(s, { features: [0, 1, 2], by: 0.5 }));
	const open = await k('alarms').where({ chamber_id: o.chamberId, recipe_step_id: o.stepId, state: 'open' }).pluck('id');
	if (open.length) await acknowledgeAlarms(k, { alarmIds: open, userId: o.userId, causeCode: 'FA-LIMIT', disposition: 'continue', comment: 'Statistical false alarm, neighbours in family.' });
	for (let i = 0; i < 5; i++) await one(nextRow(s));
	const before = new Set((await k('alarms').pluck('id')) as number[]);
	const liveRulesAtOnset = (await k('alarms').where({ chamber_id: o.chamberId, recipe_step_id: o.stepId, state: 'acknowledged' }).pluck('rule')) as string[];
	const ratios: number[] = [];
	for (let i = 1; i <= o.maxWafers; i++) {
		const w = await one(nextRow(s, { features: [4, 5, 6], by: o.shift }));
		ratios.push(Number((await k('scores').where({ wafer_step_id: w.id }).first('worst_ratio')).worst_ratio));
		const opened = await k('alarms').where({ chamber_id: o.chamberId, recipe_step_id: o.stepId }).select('id', 'rule');
		const fresh = opened.filter((a) => !before.has(a.id));
		if (fresh.length) return { wafers: i, acknowledged: open, liveRulesAtOnset, openedAfter: fresh, ratios };
	}
	return { wafers: null, acknowledged: open, liveRulesAtOnset, openedAfter: [], ratios };
}
