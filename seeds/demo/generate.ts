import { drawPersonality } from './chamber';
import {
	airLeakSccm,
	episodeActive,
	heLeakSccm,
	o2FlowFactor,
	PART_SWAP_OFFSET,
	rfMatchWearFraction
} from './episodes';
import { EPISODE_CHAMBERS } from './fab';
import { buildStepModel, rfOnSeconds, simulateStep, type StepModel, type WaferConditions } from './plasma';
import { stepPhysics } from './recipes';
import { stream } from './rng';
import { rfSecondsPerWafer, scheduleWafers, WAFERS_PER_CHAMBER_DAY, type ScheduledWafer } from './schedule';
import type { DemoScenario, DemoWaferStep } from './types';

/** Golden-wafer story: after each wet clean, skip the seasoning window, qualify the next wafers (at
 * most {@link QUALIFICATION_PER_LOT} from any one lot), then keep every n-th wafer (metrology-sampled;
 * n = 5 in the compressed weeks, 25 at real volume) until the next clean, so golden sets span the
 * clouding and many lots. */
export const SEASONING_WAFERS = 30;
export const QUALIFICATION_WAFERS = 12;
/**
 * Qualification wafers taken from one lot, at most. Lots differ (film thickness, etch-product load),
 * and a qualification set of 12 consecutive wafers is one or two lots: the baseline then learns too
 * little of the lot-to-lot spread and every later lot a little off the qualifying one trips Q.
 */
export const QUALIFICATION_PER_LOT = 2;
export const GOLDEN_SAMPLE_EVERY = 5;
/**
 * At real volume a clean cycle is ≈ 1,500–2,000 wafers: one golden wafer in 25 (about one a lot, a
 * usual metrology sampling rate: common practice) gives ≈ 70–80 a cycle, so the seed's baselines
 * (the latest ≤ 80 golden wafers) still span one whole cycle of window clouding, as in the
 * compressed weeks.
 */
export const GOLDEN_SAMPLE_EVERY_REAL_VOLUME = 25;
/** Gap between the end of one step and the start of the next, s. */
const STEP_GAP_S = 3;

/**
 * Every wafer-step of the demo, in `processedAt` order (ties: chamber code, then step order). Lazy:
 * each chamber is simulated by its own seeded stream and the chambers are merged by time, so memory
 * stays at one wafer per chamber however much is consumed.
 *
 * @param opts.seed master seed (default: the scenario's)
 * @throws Error when the scenario names a recipe the demo has no plasma model for
 */
export function* generateWaferSteps(
	scenario: DemoScenario,
	opts: { seed?: number } = {}
): Generator<DemoWaferStep> {
	const seed = opts.seed ?? scenario.seed;
	const schedule = scheduleWafers(scenario, seed);
	const codes = scenario.chambers.map((c) => c.code).sort();
	const streams = codes.map((code) => chamberSteps(scenario, seed, code, schedule.get(code) ?? []));
	const heads = streams.map((s) => s.next());
	for (;;) {
		let best = -1;
		for (let i = 0; i < heads.length; i++) {
			const h = heads[i];
			if (h.done) continue;
			if (
				best < 0 ||
				h.value.processedAt.getTime() < (heads[best].value as DemoWaferStep).processedAt.getTime()
			)
				best = i;
		}
		if (best < 0) return;
		yield heads[best].value as DemoWaferStep;
		heads[best] = streams[best].next();
	}
}

/** One chamber's wafer-steps in time order. */
function* chamberSteps(
	scenario: DemoScenario,
	seed: number,
	code: string,
	wafers: ScheduledWafer[]
): Generator<DemoWaferStep> {
	const chamber = scenario.chambers.find((c) => c.code === code)!;
	const personality = drawPersonality(stream(seed, `chamber:${code}`), code === EPISODE_CHAMBERS.partSwap);
	const rng = stream(seed, `wafers:${code}`);
	const models = new Map<string, StepModel[]>();
	for (const recipe of chamber.recipes) {
		const r = scenario.recipes.find((x) => x.code === recipe);
		if (!r) throw new Error(`demo: chamber ${code} runs unknown recipe ${recipe}`);
		const feats = scenario.features[recipe];
		models.set(
			recipe,
			r.steps.map((s) => buildStepModel(stepPhysics(recipe, s.name), feats[s.name], personality))
		);
	}
	const startMs = scenario.start.getTime();
	const endMs = scenario.end.getTime();
	const cleans = scenario.maintenance
		.filter((m) => m.chamberCode === code && m.kind === 'wet_clean')
		.map((m) => m.at.getTime());
	const episodes = scenario.episodes.filter((e) => e.chamberCode === code);

	// State carried in from the last clean before the window (no wafers of it are emitted).
	let ci = cleans.findIndex((t) => t > startMs);
	if (ci < 0) ci = cleans.length;
	const before = ci > 0 ? cleans[ci - 1] : startMs;
	let sinceClean = Math.round(((startMs - before) / 86_400_000) * WAFERS_PER_CHAMBER_DAY);
	let rfSeconds = sinceClean * rfSecondsPerWafer(scenario, chamber.recipes[0]);
	// Window clouding runs on the PM counter's share of its interval: a cycle ends as clouded at real
	// volume (30–40 RF-hours) as in the compressed weeks (100–140 wafers), because a fab sets the
	// interval to keep deposits in bounds (common practice). `rfSeconds` counts in the compressed
	// weeks' RF seconds; at real volume each real RF second counts compressed ÷ real.
	const volumeFrom = scenario.realVolume ? scenario.realVolume.from.getTime() : Infinity;
	const pm = scenario.pmIntervals[code];
	const realScale = pm?.realVolumeRfS ? pm.compressedRfS / pm.realVolumeRfS : 1;
	let qualified = new Map<string, number>();
	let sampled = new Map<string, number>();

	for (const w of wafers) {
		while (ci < cleans.length && cleans[ci] <= w.startMs) {
			sinceClean = 0;
			rfSeconds = 0;
			qualified = new Map();
			sampled = new Map();
			ci++;
		}
		const conditions: WaferConditions = {
			wafersSinceClean: sinceClean,
			rfHoursSinceClean: rfSeconds / 3600,
			lotLoad: w.lotLoad,
			o2Factor: 1,
			airLeakSccm: 0,
			heLeakSccm: 0,
			rfMatchWear: 0,
			swap: null
		};
		let excluded = false;
		for (const ep of episodes) {
			if (ep.kind === 'part_swap_offset') {
				if (episodeActive(ep, w.startMs))
					conditions.swap = { species: PART_SWAP_OFFSET.species, dcBias: PART_SWAP_OFFSET.dcBias };
				else excluded = true;
				continue;
			}
			if (episodeActive(ep, w.startMs)) excluded = true;
			if (ep.kind === 'o2_mfc_drift') conditions.o2Factor = o2FlowFactor(ep, w.startMs, endMs);
			else if (ep.kind === 'air_leak') conditions.airLeakSccm = airLeakSccm(ep, w.startMs, endMs);
			else if (ep.kind === 'he_backside_leak') conditions.heLeakSccm = heLeakSccm(ep, w.startMs, endMs);
			else if (ep.kind === 'rf_match_wear')
				conditions.rfMatchWear = rfMatchWearFraction(ep, w.startMs, endMs);
		}
		const realVolume = w.startMs >= volumeFrom;
		const golden =
			!excluded &&
			sinceClean >= SEASONING_WAFERS &&
			isGolden(
				w.recipe,
				w.lotId,
				qualified,
				sampled,
				realVolume ? GOLDEN_SAMPLE_EVERY_REAL_VOLUME : GOLDEN_SAMPLE_EVERY
			);

		let t = w.startMs;
		for (const m of models.get(w.recipe)!) {
			const values = simulateStep(m, personality, conditions, rng);
			const rfOn = rfOnSeconds(m.step, w.lotLoad, rng);
			const idx = m.sensorIndex.get('rf_on_s');
			if (idx !== undefined) values[idx] = rfOn;
			yield {
				waferId: w.waferId,
				lotId: w.lotId,
				slot: w.slot,
				chamberCode: code,
				recipe: w.recipe,
				step: m.step.name,
				processedAt: new Date(Math.round(t / 1000) * 1000),
				golden,
				values
			};
			rfSeconds += realVolume ? rfOn * realScale : rfOn;
			t += (rfOn + STEP_GAP_S) * 1000;
		}
		sinceClean++;
	}
}

/** `qualified` counts per recipe and per recipe × lot in this clean cycle; `sampled` per recipe. */
function isGolden(
	recipe: string,
	lotId: string,
	qualified: Map<string, number>,
	sampled: Map<string, number>,
	every: number
): boolean {
	const q = qualified.get(recipe) ?? 0;
	if (q < QUALIFICATION_WAFERS) {
		const key = `${recipe}\u0000${lotId}`;
		const inLot = qualified.get(key) ?? 0;
		if (inLot >= QUALIFICATION_PER_LOT) return false;
		qualified.set(recipe, q + 1);
		qualified.set(key, inLot + 1);
		return true;
	}
	const s = (sampled.get(recipe) ?? 0) + 1;
	sampled.set(recipe, s);
	return s % every === 0;
}

/** Keys of the golden wafer-steps among `rows` (wafer, chamber, recipe, step). */
export function goldenWaferKeys(
	rows: Iterable<DemoWaferStep>
): { waferId: string; chamberCode: string; recipe: string; step: string }[] {
	const out = [];
	for (const r of rows)
		if (r.golden)
			out.push({ waferId: r.waferId, chamberCode: r.chamberCode, recipe: r.recipe, step: r.step });
	return out;
}
