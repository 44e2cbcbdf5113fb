import { AREAS, EPISODE_CHAMBERS, FAB, PEOPLE, TECHNICIANS, TOOL_PLAN, WET_CLEAN_COMMENTS } from './fab';
import { buildEpisodes } from './episodes';
import { featureCatalog } from './features';
import { RECIPE_PHYSICS } from './recipes';
import { stream } from './rng';
import {
	DOWNTIME_H,
	REAL_VOLUME_WAFERS_PER_HOUR,
	rfSecondsPerWafer,
	scheduleWafers,
	WAFERS_PER_CHAMBER_DAY
} from './schedule';
import type { DemoEpisode, DemoMaintenance, DemoRealVolume, DemoScenario } from './types';

export const DEFAULT_SEED = 20261123;
/** The demo ends on a Monday morning, 06:00 UTC, before the shift meeting. */
export const DEFAULT_END = new Date('2026-11-23T06:00:00Z');
export const DEFAULT_DAYS = 30;
/** Days at the end of the window that run at a real chamber's volume (see {@link REAL_VOLUME_WAFERS_PER_HOUR}). */
export const DEFAULT_REAL_VOLUME_DAYS = 3;
export const DAY_MS = 86_400_000;
const HOUR_MS = 3_600_000;

/**
 * The invented demo fab: areas, tools, chambers, recipes, feature catalog, people, the maintenance
 * log and the documented episodes. Pure and deterministic: the same options give the same scenario.
 *
 * @param opts.seed master seed (default {@link DEFAULT_SEED})
 * @param opts.end end of the production window (default {@link DEFAULT_END}); rounded down to a minute
 * @param opts.days length of the window in days (default 30, at least 20 so every episode fits)
 * @param opts.realVolumeDays whole days at the window's end run at real volume (default 3; 0: none,
 *   the small variant; at most 10 so the compressed weeks still hold the first baselines)
 * @throws RangeError on a non-integer seed, an invalid end date, too few days or a bad real-volume span
 */
export function buildScenario(
	opts: { seed?: number; end?: Date; days?: number; realVolumeDays?: number } = {}
): DemoScenario {
	const seed = opts.seed ?? DEFAULT_SEED;
	const days = opts.days ?? DEFAULT_DAYS;
	const volumeDays = opts.realVolumeDays ?? DEFAULT_REAL_VOLUME_DAYS;
	if (!Number.isInteger(seed)) throw new RangeError('demo seed must be an integer');
	if (!(days >= 20 && days <= 366)) throw new RangeError('demo days must be between 20 and 366');
	if (!(Number.isInteger(volumeDays) && volumeDays >= 0 && volumeDays <= 10))
		throw new RangeError('demo realVolumeDays must be a whole number from 0 to 10');
	const endMs = Math.floor((opts.end ?? DEFAULT_END).getTime() / 60_000) * 60_000;
	if (!Number.isFinite(endMs)) throw new RangeError('demo end must be a valid date');
	const startMs = endMs - days * DAY_MS;

	const tools = TOOL_PLAN.map(({ code, name, areaCode, model }) => ({ code, name, areaCode, model }));
	const chambers = TOOL_PLAN.flatMap((t) =>
		[...t.letters].map((l) => ({
			code: `${t.code}-${l}`,
			toolCode: t.code,
			name: `${t.code} chamber ${l}`,
			recipes: [t.recipe]
		}))
	);
	const recipes = RECIPE_PHYSICS.map((r) => ({
		code: r.code,
		name: r.name,
		chemistry: r.chemistry,
		steps: r.steps.map((s) => ({ name: s.name, durationS: s.durationS }))
	}));
	const episodes = buildEpisodes(startMs, endMs);
	const realVolume: DemoRealVolume | null =
		volumeDays > 0
			? {
					from: new Date(endMs - volumeDays * DAY_MS),
					wafersPerHour: REAL_VOLUME_WAFERS_PER_HOUR,
					cleanIntervalRfHours: REAL_VOLUME_CLEAN_INTERVAL_RF_HOURS
				}
			: null;
	const base = {
		seed,
		fab: { ...FAB },
		areas: AREAS.map((a) => ({ ...a })),
		tools,
		chambers,
		recipes,
		features: featureCatalog(),
		people: PEOPLE.map((p) => ({ ...p })),
		episodes,
		start: new Date(startMs),
		end: new Date(endMs),
		realVolume,
		pmIntervals: {}
	};
	const maintenance = fabMaintenance(seed, base, startMs, endMs).sort(
		(a, b) => a.at.getTime() - b.at.getTime() || a.chamberCode.localeCompare(b.chamberCode)
	);
	return { ...base, maintenance };
}

/**
 * Wet cleans are triggered by each chamber's RF-hours counter, as a fab's PM system does (common
 * practice): every chamber has its own interval, the RF time of 100–140 of its wafers (about 6–8
 * days at the demo's pace), met to within a few percent; the counter's reading at the start of the
 * window staggers the chambers. Cleaning by the calendar instead would let a slow week and a busy
 * week end at very different window clouding, and a baseline built on the short cycles would then
 * flag the long one's wafers: that is what PM counters avoid.
 */
export const CLEAN_INTERVAL_WAFERS = [100, 140] as const;

/**
 * At real volume a chamber's PM counter is set in RF-hours a fab would use: 30–40 RF-hours, about
 * 1,500–2,000 wafers or 3–5 days of production at 20 wafers an hour (etch chambers are wet-cleaned
 * every few days to weeks, at tens to a few hundred RF-hours: from memory). When the tail begins,
 * each counter keeps the share of its interval already used, so no chamber is due at once.
 */
export const REAL_VOLUME_CLEAN_INTERVAL_RF_HOURS = [30, 40] as const;

interface ChamberPlan {
	events: DemoMaintenance[];
	/** Wet cleans forced by the episodes' maintenance (after the part swap, after the seal PM). */
	forced: number[];
	/** Spans in which no periodic clean is planned (the story stays readable); until null: to the end. */
	blackouts: { from: number; until: number | null }[];
}

/** The episodes' own maintenance on a chamber: the part swap and the seal-replacement PM, each followed by a wet clean. */
function episodeMaintenance(chamberCode: string, episodes: DemoEpisode[]): ChamberPlan {
	const plan: ChamberPlan = { events: [], forced: [], blackouts: [] };
	for (const ep of episodes.filter((e) => e.chamberCode === chamberCode)) {
		const s = ep.start.getTime();
		if (ep.kind === 'part_swap_offset') {
			plan.events.push({
				chamberCode,
				kind: 'part_swap',
				at: new Date(s),
				byUsername: 'rduarte',
				comment:
					'Focus ring replaced at end of life (new ring from a new supplier lot); chamber wet-cleaned after the swap.'
			});
			plan.forced.push(s + 3 * HOUR_MS);
		} else if (ep.kind === 'he_backside_leak' && ep.end) {
			const e = ep.end.getTime();
			plan.events.push({
				chamberCode,
				kind: 'pm',
				at: new Date(e),
				byUsername: 'ikowalczyk',
				comment: 'ESC helium seal replaced after rising backside He flow; He leak-up rate back in spec.'
			});
			plan.forced.push(e + 2 * HOUR_MS);
			plan.blackouts.push({ from: s - DAY_MS, until: e + 2 * HOUR_MS });
		} else if (ep.kind === 'air_leak') {
			plan.blackouts.push({ from: s - 1.5 * DAY_MS, until: null });
		}
	}
	return plan;
}

/**
 * The maintenance log of every chamber: the episodes' events, then wet cleans placed by each chamber's
 * RF-hours counter. The counter runs on a provisional schedule of the window's wafers (lots as they
 * will arrive, the episodes' downtime only); the final schedule moves a few wafers to sibling chambers
 * around each clean's downtime, so cycles end within a few percent of their interval. No periodic
 * clean falls inside an episode that a clean would not end; a forced clean within 1.5 days after a
 * planned one replaces it.
 */
function fabMaintenance(
	seed: number,
	base: Omit<DemoScenario, 'maintenance'>,
	startMs: number,
	endMs: number
): DemoMaintenance[] {
	const volumeFrom = base.realVolume ? base.realVolume.from.getTime() : Infinity;
	const plans = new Map(base.chambers.map((c) => [c.code, episodeMaintenance(c.code, base.episodes)]));
	const forcedCleans = (code: string, plan: ChamberPlan): DemoMaintenance[] =>
		plan.forced.map((at) => ({
			chamberCode: code,
			kind: 'wet_clean' as const,
			at: new Date(at),
			byUsername: 'ikowalczyk',
			comment: 'Wet clean after maintenance; seasoning wafers to follow.'
		}));
	const provisional: DemoScenario = {
		...base,
		maintenance: [...plans].flatMap(([code, p]) => [...p.events, ...forcedCleans(code, p)])
	};
	const wafers = scheduleWafers(provisional, seed);
	const minute = (ms: number) => Math.floor(ms / 60_000) * 60_000;
	const out: DemoMaintenance[] = [];
	for (const c of base.chambers) {
		const plan = plans.get(c.code)!;
		const rng = stream(seed, `cleans:${c.code}`);
		const tech = () => TECHNICIANS[rng.int(0, TECHNICIANS.length - 1)];
		const rfS = rfSecondsPerWafer(provisional, c.recipes[0]);
		const compressed = rng.between(CLEAN_INTERVAL_WAFERS[0], CLEAN_INTERVAL_WAFERS[1]) * rfS;
		// The real-volume interval comes from its own stream, so the compressed weeks stay the same.
		const real = base.realVolume
			? stream(seed, `pm-interval:${c.code}`).between(...base.realVolume.cleanIntervalRfHours) * 3600
			: null;
		base.pmIntervals[c.code] = { compressedRfS: compressed, realVolumeRfS: real };
		let interval = compressed;
		const target = () => interval * (1 + 0.03 * Math.max(-2, Math.min(2, rng.normal())));
		// Counter reading at the window's start: it dates the last clean before the window.
		let counter = rng.between(0.1, 0.85) * interval;
		const cleans: number[] = [minute(startMs - (counter / (WAFERS_PER_CHAMBER_DAY * rfS)) * DAY_MS)];
		let due = target();
		let downUntil = -Infinity;
		let stopped = false;
		const forced = [...plan.forced].sort((a, b) => a - b);
		for (const w of wafers.get(c.code) ?? []) {
			if (stopped) break;
			if (real !== null && interval !== real && w.startMs >= volumeFrom) {
				// The tail begins: the counter keeps the share of the interval it has used.
				counter *= real / interval;
				due *= real / interval;
				interval = real;
			}
			const f = forced.find((x) => x > cleans[cleans.length - 1] && x <= w.startMs);
			if (f !== undefined) {
				cleans.push(f);
				counter = 0;
				due = target();
				downUntil = f + DOWNTIME_H.wet_clean * HOUR_MS;
			}
			if (w.startMs < downUntil) continue;
			counter += rfS;
			if (counter < due) continue;
			let at = minute(w.startMs + (rfS + 100) * 1000);
			const bo = plan.blackouts.find((b) => at >= b.from && (b.until === null || at < b.until));
			if (bo) {
				if (bo.until === null) stopped = true;
				continue; // the clean waits for the episode's own (forced) clean, or for the end
			}
			if (forced.some((x) => x > at && x <= at + 1.5 * DAY_MS)) continue;
			if (at >= endMs) break;
			cleans.push(at);
			counter = 0;
			due = target();
			downUntil = at + DOWNTIME_H.wet_clean * HOUR_MS;
		}
		for (const f of forced) if (!cleans.includes(f) && f < endMs) cleans.push(f);
		cleans.sort((a, b) => a - b);
		out.push(...plan.events);
		for (const at of cleans) {
			const comment = plan.forced.includes(at)
				? 'Wet clean after maintenance; seasoning wafers to follow.'
				: WET_CLEAN_COMMENTS[rng.int(0, WET_CLEAN_COMMENTS.length - 1)];
			out.push({ chamberCode: c.code, kind: 'wet_clean', at: new Date(at), byUsername: tech(), comment });
		}
	}
	return out;
}

export { EPISODE_CHAMBERS };
