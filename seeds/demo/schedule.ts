import { stepPhysics } from './recipes';
import { stream } from './rng';
import type { DemoScenario } from './types';

const DAY_MS = 86_400_000;
const HOUR_MS = 3_600_000;

/**
 * The compressed weeks: about 17.5 wafers per chamber per day reach the demo (≈ 26k wafer-steps a
 * month), so a whole clean cycle, its seasoning and its golden wafers fit in a week.
 */
export const WAFERS_PER_CHAMBER_DAY = 17.5;
/**
 * A real chamber's pace in the real-volume tail, wafers per chamber and hour: etch chambers run
 * roughly 15–30 wafers an hour (from memory); lots are released for 20.
 */
export const REAL_VOLUME_WAFERS_PER_HOUR = 20;
/**
 * Wafer handling around the RF time of one wafer (transfer in and out, pump-down, gas and pressure
 * stabilisation, strike), s. In the compressed weeks a lot comes to an idle tool: 100 s. At real
 * volume the tool keeps the next wafer staged in the load lock while the chamber runs, so only the
 * exchange and stabilisation remain: about a minute (from memory). With the demo's 60–75 s of RF time
 * a chamber can then do 27–30 wafers an hour, so at 20 an hour it is about 70 % loaded and its queue
 * stays short.
 */
export const OVERHEAD_S = { compressed: 100, realVolume: 60 } as const;
/**
 * Lot-to-lot spread (1 σ) of the etch-product load within one recipe: the same product and mask, so
 * only incoming film thickness and resist vary, about 2 % (demo choice, from memory).
 */
export const LOT_LOAD_SD = 0.02;
/** Chamber out of production after each kind of maintenance, h. */
export const DOWNTIME_H = { wet_clean: 5, part_swap: 3, pm: 2 } as const;

export interface ScheduledWafer {
	waferId: string;
	lotId: string;
	slot: number;
	recipe: string;
	chamberCode: string;
	startMs: number;
	/** Lot-to-lot load deviation (pattern density, film thickness), shared by the lot's wafers. */
	lotLoad: number;
}

/** Nominal RF-on seconds of one wafer of a recipe (sum of its steps). */
export function rfSecondsPerWafer(scenario: DemoScenario, recipe: string): number {
	const r = scenario.recipes.find((x) => x.code === recipe);
	if (!r) throw new Error(`demo: unknown recipe ${recipe}`);
	return r.steps.reduce((s, st) => s + stepPhysics(recipe, st.name).durationS, 0);
}

/**
 * Lots arrive at each tool at random (Gamma-distributed gaps), 25 wafers in most lots, fewer in some; each
 * wafer goes, in slot order, to the tool's chamber that can start it first, skipping chambers down for
 * maintenance. Returns each chamber's wafers in start order. Lot ids are numbered fab-wide in arrival
 * order.
 */
export function scheduleWafers(scenario: DemoScenario, seed: number): Map<string, ScheduledWafer[]> {
	const startMs = scenario.start.getTime();
	const endMs = scenario.end.getTime();
	const realVolume = scenario.realVolume;
	const volumeFrom = realVolume ? realVolume.from.getTime() : null;
	const down = new Map<string, [number, number][]>();
	for (const m of scenario.maintenance) {
		const w: [number, number] = [m.at.getTime(), m.at.getTime() + DOWNTIME_H[m.kind] * HOUR_MS];
		down.set(m.chamberCode, [...(down.get(m.chamberCode) ?? []), w]);
	}
	type Lot = { tool: string; arrival: number; size: number; recipe: string; load: number };
	const lots: Lot[] = [];
	for (const tool of scenario.tools) {
		const chambers = scenario.chambers.filter((c) => c.toolCode === tool.code);
		const recipes = [...new Set(chambers.flatMap((c) => c.recipes))].sort();
		if (recipes.length === 0) continue;
		const rng = stream(seed, `lots:${tool.code}`);
		const meanGapMs = (25 / (chambers.length * WAFERS_PER_CHAMBER_DAY)) * DAY_MS;
		const volumeGapMs = (25 / (chambers.length * (realVolume?.wafersPerHour ?? 0))) * HOUR_MS;
		// Gaps between lots: Gamma(4) around the mean (steadier than Poisson arrivals, as WIP release is).
		// In the real-volume tail the same draws are scaled to its shorter mean gap, so the compressed
		// weeks' lots are the same with or without the tail.
		const gap = (t: number) =>
			((volumeFrom !== null && t >= volumeFrom ? volumeGapMs : meanGapMs) / 4) *
			-Math.log((1 - rng.uniform()) * (1 - rng.uniform()) * (1 - rng.uniform()) * (1 - rng.uniform()));
		// The first lot of the tail does not wait for the long gap of the compressed weeks to run out.
		const next = (t: number) => {
			const g = gap(t);
			return volumeFrom !== null && t < volumeFrom && t + g > volumeFrom
				? volumeFrom + rng.uniform() * volumeGapMs
				: t + g;
		};
		for (let t = startMs + rng.uniform() * meanGapMs; t < endMs; t = next(t)) {
			const size = rng.uniform() < 0.85 ? 25 : rng.int(8, 24);
			const recipe = recipes[rng.int(0, recipes.length - 1)];
			lots.push({
				tool: tool.code,
				arrival: Math.round(t / 1000) * 1000,
				size,
				recipe,
				load: LOT_LOAD_SD * rng.normal()
			});
		}
	}
	lots.sort((a, b) => a.arrival - b.arrival || a.tool.localeCompare(b.tool));

	const out = new Map<string, ScheduledWafer[]>(scenario.chambers.map((c) => [c.code, []]));
	const freeAt = new Map<string, number>(scenario.chambers.map((c) => [c.code, startMs]));
	lots.forEach((lot, i) => {
		const lotId = `L${26000 + i}`;
		const overheadS = volumeFrom !== null && lot.arrival >= volumeFrom ? OVERHEAD_S.realVolume : OVERHEAD_S.compressed;
		const cycleMs = (rfSecondsPerWafer(scenario, lot.recipe) + overheadS) * 1000;
		const able = scenario.chambers.filter((c) => c.toolCode === lot.tool && c.recipes.includes(lot.recipe));
		for (let slot = 1; slot <= lot.size; slot++) {
			const ready = lot.arrival + (slot - 1) * 40_000;
			let best: { code: string; at: number } | null = null;
			for (const c of able) {
				const at = firstFreeStart(Math.max(ready, freeAt.get(c.code)!), cycleMs, down.get(c.code) ?? []);
				if (!best || at < best.at) best = { code: c.code, at };
			}
			if (!best || best.at + cycleMs > endMs) continue;
			freeAt.set(best.code, best.at + cycleMs);
			out.get(best.code)!.push({
				waferId: `${lotId}-${String(slot).padStart(2, '0')}`,
				lotId,
				slot,
				recipe: lot.recipe,
				chamberCode: best.code,
				startMs: best.at,
				lotLoad: lot.load
			});
		}
	});
	return out;
}

/** Earliest start ≥ t whose cycle does not overlap any downtime window. */
function firstFreeStart(t: number, cycleMs: number, windows: [number, number][]): number {
	let at = t;
	for (let moved = true; moved;) {
		moved = false;
		for (const [a, b] of windows) {
			if (at < b && at + cycleMs > a) {
				at = b;
				moved = true;
			}
		}
	}
	return at;
}
