/**
 * The demo's RF match wear episode (seeds/demo/episodes.ts, `rf_match_wear`), as Lockstep's own
 * scoring and alarm rules saw it in the seeded demo: alarms on the chamber during the episode whose
 * worst wafers have the RF sensors (rf_reflected_w, dc_bias_v) leading the contributions, and nothing
 * of the kind in the days before it. The statistics are not tuned for the episode; this only reads
 * what the seed's replay raised. The demo is invented data (seeds/demo/README.md).
 *
 * The e2e files share one seeded database in no fixed order and others acknowledge alarms, so this
 * file only reads: alarm rows and times (not their state), scores and the wafer API.
 */
import path from 'node:path';
import type { Knex } from 'knex';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import { openDb } from '../../src/lib/server/db.ts';
import { buildScenario, type DemoEpisode } from '../../seeds/demo/index.ts';
import { EPISODE_CHAMBERS } from '../../seeds/demo/fab.ts';
import { request, signIn } from './http.ts';

const CHAMBER = EPISODE_CHAMBERS.rfMatch;
const DAY = 86_400_000;
const WAFER_RULES = ['single', 'ewma', 'run'];

let k: Knex;
let episode: DemoEpisode;
let windowEnd: number;
let chamberId: number;
let cookie: string;

interface AlarmRow {
	id: number;
	rule: string;
	step: string;
	opened_at: number;
	last_seen_at: number;
	worst_wafer_step_id: number;
	first_wafer_step_id: number;
}

async function alarmsOf(where: (q: Knex.QueryBuilder) => void): Promise<AlarmRow[]> {
	const q = k('alarms as a')
		.join('recipe_steps as rs', 'rs.id', 'a.recipe_step_id')
		.where('a.chamber_id', chamberId)
		.orderBy('a.opened_at')
		.select('a.id', 'a.rule', 'rs.name as step', 'a.opened_at', 'a.last_seen_at', 'a.worst_wafer_step_id', 'a.first_wafer_step_id');
	where(q);
	return (await q).map((a) => ({ ...a, opened_at: Number(a.opened_at), last_seen_at: Number(a.last_seen_at) }));
}

/** The wafer API's leading contributors (of the statistic that drove the wafer) and its sensor z-scores. */
async function contributors(waferStepId: number): Promise<{ top: string[]; z: Record<string, number> }> {
	const r = await request(`/api/wafers/${waferStepId}`, { cookie });
	expect(r.status).toBe(200);
	const v = await r.json();
	const lead = v.contributions[v.contributions.primary] as { feature: string }[];
	return {
		top: lead.map((c) => c.feature),
		z: Object.fromEntries((v.sensors as { feature: string; z: number }[]).map((s) => [s.feature, s.z]))
	};
}

beforeAll(async () => {
	k = openDb({ client: 'better-sqlite3', filename: path.join(inject('dataDir'), 'lockstep.sqlite'), connectionString: null });
	const ch = await k('chambers').where({ code: CHAMBER }).first('id', 'created_at');
	chamberId = ch.id;
	// The seed creates each chamber at the window's start (seeds/demo-seed.ts): the window is the
	// default 30 days from there, so the episode's times are those of the seeded scenario.
	const scenario = buildScenario({ end: new Date(Number(ch.created_at) + 30 * DAY) });
	windowEnd = scenario.end.getTime();
	episode = scenario.episodes.find((e) => e.kind === 'rf_match_wear')!;
	expect(episode.chamberCode).toBe(CHAMBER);
	cookie = await signIn('viewer');
});
afterAll(async () => {
	await k?.destroy();
});

describe(`RF match wear on ${CHAMBER} in the seeded demo`, () => {
	it('raises wafer alarms in both PGE-14 steps during the episode, with the RF sensors leading the contributions', async () => {
		const start = episode.start.getTime();
		const during = await alarmsOf((q) => q.whereIn('a.rule', WAFER_RULES).andWhere('a.opened_at', '>=', start));
		expect(new Set(during.map((a) => a.step))).toEqual(new Set(['breakthrough', 'main_etch']));
		// Detected at once: the first alarm opens by the fifth wafer after the start that the rules may
		// alarm on (wafers in the seasoning window after a wet clean are scored, but their alarms held).
		const eligible = (await k('scores')
			.where({ chamber_id: chamberId, current: true, seasoning: false })
			.andWhere('processed_at', '>=', start)
			.orderBy('processed_at')
			.limit(10)
			.pluck('processed_at')) as number[];
		expect(eligible.length).toBe(10);
		expect(Math.min(...during.map((a) => a.opened_at))).toBeLessThanOrEqual(Number(eligible[4]));
		for (const a of during) {
			const { top, z } = await contributors(a.worst_wafer_step_id);
			expect(top[0], `alarm ${a.id} (${a.rule}, ${a.step}) worst wafer: ${top.slice(0, 5).join(', ')}`).toBe('rf_reflected_w');
			expect(top.slice(0, 5), `alarm ${a.id}`).toContain('dc_bias_v');
			// Reflected power far above its golden spread; the (negative) bias smaller in magnitude.
			expect(z.rf_reflected_w, `alarm ${a.id}`).toBeGreaterThan(10);
			expect(z.dc_bias_v, `alarm ${a.id}`).toBeGreaterThan(3);
		}
	});

	// SKIPPED 2026-12-03, open in issue 11: under the calibrated fleet matching the main_etch fleet alarm
	// names 166 features (the whole spectrum drops with delivered power) and not rf_reflected_w. The
	// naming must be fixed, not this expectation.
	it.skip('sets the chamber apart from the PGE-14 fleet on rf_reflected_w while it wears', async () => {
		const start = episode.start.getTime();
		const fleet = await alarmsOf((q) => q.where('a.rule', 'fleet').andWhere('a.opened_at', '>=', start));
		expect(fleet.length).toBeGreaterThan(0);
		for (const a of fleet) {
			const d = JSON.parse((await k('alarms').where({ id: a.id }).first('detail_json')).detail_json);
			// every line drops with the delivered power too, so a continuum channel may lead; the reflected power must be named
			expect(d.separating, `fleet alarm ${a.id} (${a.step})`).toContain('rf_reflected_w');
		}
	});

	it('its Q climbs as the match wears: the last wafers far above the days before the episode', async () => {
		const start = episode.start.getTime();
		const q = (from: number, to: number, last: boolean) =>
			k('scores')
				.where({ chamber_id: chamberId, current: true, seasoning: false })
				.andWhere('processed_at', '>=', from)
				.andWhere('processed_at', '<', to)
				.orderBy('processed_at', last ? 'desc' : 'asc')
				.limit(last ? 20 : 1000)
				.pluck('q_ratio');
		const mean = (a: number[]) => a.reduce((x, v) => x + Number(v), 0) / a.length;
		const before = (await q(start - 3 * DAY, start, false)) as number[];
		const late = (await q(start, windowEnd, true)) as number[];
		expect(before.length).toBeGreaterThan(20);
		expect(late.length).toBe(20);
		expect(mean(before)).toBeLessThan(1);
		expect(mean(late)).toBeGreaterThan(10 * mean(before));
		expect(late.every((v) => Number(v) > 1)).toBe(true);
	});

	it('no alarm in the week before the episode shows its signature', async () => {
		const start = episode.start.getTime();
		const before = await alarmsOf((q) => q.whereIn('a.rule', WAFER_RULES).andWhere('a.opened_at', '>=', start - 7 * DAY).andWhere('a.opened_at', '<', start));
		for (const a of before) {
			// An alarm before the start must not run into the episode either (it would be the wear's).
			expect(a.last_seen_at, `alarm ${a.id}`).toBeLessThan(start);
			// The wear's signature is reflected power: leading the contributions, or far from its golden
			// spread. (A false alarm may still list dc_bias_v among others: the bias alone is not the wear.)
			const { top, z } = await contributors(a.worst_wafer_step_id);
			const why = `alarm ${a.id} (${a.rule}, ${a.step}): ${top.slice(0, 5).join(', ')}; rf_reflected_w z ${z.rf_reflected_w?.toFixed(1)}`;
			expect(top[0], why).not.toBe('rf_reflected_w');
			expect(Math.abs(z.rf_reflected_w), why).toBeLessThan(4);
		}
		// No fleet alarm either: the chamber sat with its fleet until the wear began.
		const fleet = await alarmsOf((q) => q.where('a.rule', 'fleet').andWhere('a.last_seen_at', '>=', start - 7 * DAY).andWhere('a.opened_at', '<', start));
		expect(fleet.map((a) => a.id)).toEqual([]);
	});
});
