import { AREAS, EPISODE_CHAMBERS, FAB, PEOPLE, TECHNICIANS, TOOL_PLAN, WET_CLEAN_COMMENTS } from './fab';
import { buildEpisodes } from './episodes';
import { featureCatalog } from './features';
import { RECIPE_PHYSICS } from './recipes';
import { stream } from './rng';
import type { DemoEpisode, DemoMaintenance, DemoScenario } from './types';

export const DEFAULT_SEED = 20261123;
/** The demo ends on a Monday morning, 06:00 UTC, before the shift meeting. */
export const DEFAULT_END = new Date('2026-11-23T06:00:00Z');
export const DEFAULT_DAYS = 30;
export const DAY_MS = 86_400_000;
const HOUR_MS = 3_600_000;

/**
 * The invented demo fab: areas, tools, chambers, recipes, feature catalog, people, the maintenance
 * log and the documented episodes. Pure and deterministic: the same options give the same scenario.
 *
 * @param opts.seed master seed (default {@link DEFAULT_SEED})
 * @param opts.end end of the production window (default {@link DEFAULT_END}); rounded down to a minute
 * @param opts.days length of the window in days (default 30, at least 20 so every episode fits)
 * @throws RangeError on a non-integer seed, an invalid end date or too few days
 */
export function buildScenario(opts: { seed?: number; end?: Date; days?: number } = {}): DemoScenario {
	const seed = opts.seed ?? DEFAULT_SEED;
	const days = opts.days ?? DEFAULT_DAYS;
	if (!Number.isInteger(seed)) throw new RangeError('demo seed must be an integer');
	if (!(days >= 20 && days <= 366)) throw new RangeError('demo days must be between 20 and 366');
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
	const maintenance = chambers
		.flatMap((c) => chamberMaintenance(seed, c.code, startMs, endMs, episodes))
		.sort((a, b) => a.at.getTime() - b.at.getTime() || a.chamberCode.localeCompare(b.chamberCode));

	return {
		seed,
		fab: { ...FAB },
		areas: AREAS.map((a) => ({ ...a })),
		tools,
		chambers,
		recipes,
		features: featureCatalog(),
		people: PEOPLE.map((p) => ({ ...p })),
		maintenance,
		episodes,
		start: new Date(startMs),
		end: new Date(endMs)
	};
}

/**
 * One chamber's maintenance: wet cleans every 5–9 days (staggered by the chamber's own stream),
 * starting with the last clean before the window, plus the episodes' forced events (the part swap and
 * the seal-replacement PM, each followed by a wet clean). No periodic clean falls inside an episode
 * that a clean would not end, so the story stays readable.
 */
function chamberMaintenance(
	seed: number,
	chamberCode: string,
	startMs: number,
	endMs: number,
	episodes: DemoEpisode[]
): DemoMaintenance[] {
	const rng = stream(seed, `cleans:${chamberCode}`);
	const tech = () => TECHNICIANS[rng.int(0, TECHNICIANS.length - 1)];
	const out: DemoMaintenance[] = [];
	const forced: number[] = [];
	const blackouts: { from: number; until: number | null }[] = [];
	for (const ep of episodes.filter((e) => e.chamberCode === chamberCode)) {
		const s = ep.start.getTime();
		if (ep.kind === 'part_swap_offset') {
			out.push({
				chamberCode,
				kind: 'part_swap',
				at: new Date(s),
				byUsername: 'rduarte',
				comment:
					'Focus ring replaced at end of life (new ring from a new supplier lot); chamber wet-cleaned after the swap.'
			});
			forced.push(s + 3 * HOUR_MS);
		} else if (ep.kind === 'he_backside_leak' && ep.end) {
			const e = ep.end.getTime();
			out.push({
				chamberCode,
				kind: 'pm',
				at: new Date(e),
				byUsername: 'ikowalczyk',
				comment: 'ESC helium seal replaced after rising backside He flow; He leak-up rate back in spec.'
			});
			forced.push(e + 2 * HOUR_MS);
			blackouts.push({ from: s - DAY_MS, until: e + 2 * HOUR_MS });
		} else if (ep.kind === 'air_leak') {
			blackouts.push({ from: s - 1.5 * DAY_MS, until: null });
		}
	}
	const minute = (ms: number) => Math.floor(ms / 60_000) * 60_000;
	let t = minute(startMs - rng.between(1, 8) * DAY_MS);
	const cleans = [t];
	for (;;) {
		let cand = minute(t + rng.between(5, 9) * DAY_MS);
		const bo = blackouts.find((b) => cand >= b.from && (b.until === null || cand < b.until));
		if (bo) {
			if (bo.until === null) break;
			cand = bo.until;
		}
		const f = forced.find((f) => f > t && f <= cand + 1.5 * DAY_MS);
		if (f !== undefined) cand = f;
		if (cand >= endMs) break;
		cleans.push(cand);
		t = cand;
	}
	for (const at of cleans) {
		const comment = forced.includes(at)
			? 'Wet clean after maintenance; seasoning wafers to follow.'
			: WET_CLEAN_COMMENTS[rng.int(0, WET_CLEAN_COMMENTS.length - 1)];
		out.push({ chamberCode, kind: 'wet_clean', at: new Date(at), byUsername: tech(), comment });
	}
	return out;
}

export { EPISODE_CHAMBERS };
