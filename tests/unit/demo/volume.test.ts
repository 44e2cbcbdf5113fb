/**
 * The demo's real-volume tail (seeds/demo/scenario.ts, DEFAULT_REAL_VOLUME_DAYS): the last days at a
 * real chamber's pace, judged as a fab engineer would — 15–30 wafers an hour per chamber and step
 * (a chamber runs roughly 15–30 wafers an hour: from memory, ../shared/DOMAIN.md), wet cleans by a PM
 * counter in RF-hours, seasoning and qualification as after every clean, golden wafers sampled about
 * one a lot, and the compressed weeks before it untouched (so the small variant the e2e suite seeds
 * is the same month). The tail is streamed: only a few fields of each row are kept.
 */
import { createHash } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import {
	buildScenario,
	generateWaferSteps,
	GOLDEN_SAMPLE_EVERY_REAL_VOLUME,
	QUALIFICATION_PER_LOT,
	QUALIFICATION_WAFERS,
	REAL_VOLUME_CLEAN_INTERVAL_RF_HOURS,
	SEASONING_WAFERS,
	type DemoScenario,
	type DemoWaferStep
} from '../../../seeds/demo/index';

const HOUR = 3_600_000;
const DAY = 24 * HOUR;

interface Lite {
	waferId: string;
	lotId: string;
	chamberCode: string;
	step: string;
	t: number;
	golden: boolean;
	rfOn: number;
}

const scenario = buildScenario();
const small = buildScenario({ realVolumeDays: 0 });
const from = scenario.realVolume!.from.getTime();
const end = scenario.end.getTime();

function rfIndex(sc: DemoScenario, r: DemoWaferStep): number {
	return sc.features[r.recipe][r.step].findIndex((f) => f.name === 'rf_on_s');
}

/** Digest of the rows before the tail, and the full scenario's rows in a light form. */
function stream(sc: DemoScenario, keep: boolean): { before: string; rows: Lite[] } {
	const h = createHash('sha256');
	const rows: Lite[] = [];
	for (const r of generateWaferSteps(sc)) {
		const t = r.processedAt.getTime();
		if (t < from) {
			h.update(`${r.waferId},${r.chamberCode},${r.step},${t},${r.golden}\n`);
			h.update(Buffer.from(r.values.buffer));
		}
		if (keep)
			rows.push({ waferId: r.waferId, lotId: r.lotId, chamberCode: r.chamberCode, step: r.step, t, golden: r.golden, rfOn: r.values[rfIndex(sc, r)] });
	}
	return { before: h.digest('hex'), rows };
}

const full = stream(scenario, true);
const tail = full.rows.filter((r) => r.t >= from);
const firstStep = new Map(scenario.chambers.map((c) => [c.code, scenario.recipes.find((r) => r.code === c.recipes[0])!.steps[0].name]));
/** One row per wafer: its first step's. */
const isFirstStep = (r: Lite) => firstStep.get(r.chamberCode) === r.step;
const cleansOf = (code: string) =>
	scenario.maintenance.filter((m) => m.chamberCode === code && m.kind === 'wet_clean').map((m) => m.at.getTime());

describe('demo real-volume tail', () => {
	it('is the last 3 whole days, and the weeks before it are the small variant’s, value for value', () => {
		expect(end - from).toBe(3 * DAY);
		expect(small.realVolume).toBeNull();
		expect(stream(small, false).before).toBe(full.before);
		// …and the tail is not the small variant's last days.
		expect(tail.length).toBeGreaterThan(10 * full.rows.filter((r) => r.t < from && r.t >= from - 3 * DAY).length);
	});

	it('runs every chamber × step at 15–30 wafers an hour (a real chamber’s pace)', () => {
		const hours = (end - from) / HOUR;
		const count = new Map<string, number>();
		for (const r of tail) count.set(`${r.chamberCode}/${r.step}`, (count.get(`${r.chamberCode}/${r.step}`) ?? 0) + 1);
		const expected = scenario.chambers.reduce((n, c) => n + scenario.recipes.find((r) => r.code === c.recipes[0])!.steps.length, 0);
		expect(count.size).toBe(expected);
		for (const [key, n] of count) {
			expect(n / hours, key).toBeGreaterThanOrEqual(15);
			expect(n / hours, key).toBeLessThanOrEqual(30);
		}
		// Before the tail: the compressed weeks' ≈ 17.5 wafers a day, far below.
		const before = full.rows.filter((r) => r.t >= from - 3 * DAY && r.t < from && isFirstStep(r));
		expect(before.length / (3 * 24) / scenario.chambers.length).toBeLessThan(1.5);
	});

	it('wet-cleans by a PM counter of 30–40 RF-hours: each tail clean ends a full interval, none overdue', () => {
		let cleaned = 0;
		for (const c of scenario.chambers) {
			const pm = scenario.pmIntervals[c.code];
			expect(pm.realVolumeRfS! / 3600, c.code).toBeGreaterThanOrEqual(REAL_VOLUME_CLEAN_INTERVAL_RF_HOURS[0]);
			expect(pm.realVolumeRfS! / 3600, c.code).toBeLessThanOrEqual(REAL_VOLUME_CLEAN_INTERVAL_RF_HOURS[1]);
			const mine = full.rows.filter((r) => r.chamberCode === c.code);
			// Share of its interval the counter has used between two times: compressed RF seconds before the tail, real ones in it.
			const used = (a: number, b: number) =>
				mine.filter((r) => r.t > a && r.t < b).reduce((s, r) => s + r.rfOn / (r.t < from ? pm.compressedRfS : pm.realVolumeRfS!), 0);
			const cleans = cleansOf(c.code);
			const episodic = scenario.episodes.some((e) => e.chamberCode === c.code && e.kind !== 'o2_mfc_drift' && e.kind !== 'rf_match_wear');
			for (let i = 1; i < cleans.length; i++) {
				if (cleans[i] < from || cleans[i - 1] < scenario.start.getTime()) continue;
				cleaned++;
				// The counter runs on a provisional schedule and siblings' cleans move a few wafers, so a
				// cycle begun in the compressed weeks may already be ≈ 20 % over there (scenario.test.ts
				// allows cycles 30 % apart); the tail's own part never runs past one interval.
				const why = `${c.code} clean ${new Date(cleans[i]).toISOString()}`;
				const share = used(cleans[i - 1], cleans[i]);
				expect(share, why).toBeGreaterThan(0.8);
				expect(share, why).toBeLessThan(1.35);
				expect(used(Math.max(from, cleans[i - 1]), cleans[i]), why).toBeLessThan(1.1);
			}
			if (!episodic) {
				const last = Math.max(...cleans);
				if (last >= scenario.start.getTime()) {
					expect(used(last, end), `${c.code} overdue at the end`).toBeLessThan(1.35);
					expect(used(Math.max(from, last), end), `${c.code} overdue at the end`).toBeLessThan(1.1);
				}
			}
		}
		// With 3–5 days' intervals most chambers are cleaned once in the 3-day tail.
		expect(cleaned).toBeGreaterThanOrEqual(scenario.chambers.length / 2);
	});

	it('after each tail clean: 30 seasoning wafers, 12 qualification wafers from ≥ 6 lots, then about one golden wafer in 25', () => {
		let cycles = 0;
		let sampled = 0;
		let golden = 0;
		for (const c of scenario.chambers) {
			const mine = tail.filter((r) => r.chamberCode === c.code && isFirstStep(r));
			// Chambers in an episode have no golden wafers (generate.test.ts); the part swap is long over.
			const sick = scenario.episodes.some((e) => e.chamberCode === c.code && e.kind !== 'part_swap_offset' && (e.end === null || e.end.getTime() > from));
			if (sick) continue;
			for (const at of cleansOf(c.code).filter((t) => t >= from)) {
				const next = cleansOf(c.code).find((t) => t > at) ?? Infinity;
				const cycle = mine.filter((r) => r.t > at && r.t < next);
				if (cycle.length < SEASONING_WAFERS + 200) continue;
				cycles++;
				expect(cycle.slice(0, SEASONING_WAFERS).some((r) => r.golden), c.code).toBe(false);
				const g = cycle.filter((r) => r.golden);
				const qual = g.slice(0, QUALIFICATION_WAFERS);
				const perLot = new Map<string, number>();
				for (const r of qual) perLot.set(r.lotId, (perLot.get(r.lotId) ?? 0) + 1);
				expect(Math.max(...perLot.values()), c.code).toBeLessThanOrEqual(QUALIFICATION_PER_LOT);
				// The qualification wafers are done within a shift of the clean at this pace.
				expect(qual[QUALIFICATION_WAFERS - 1].t - at, c.code).toBeLessThan(12 * HOUR);
				const rest = cycle.slice(cycle.indexOf(qual[QUALIFICATION_WAFERS - 1]) + 1);
				sampled += rest.length;
				golden += rest.filter((r) => r.golden).length;
			}
		}
		expect(cycles).toBeGreaterThanOrEqual(8);
		expect(golden / sampled).toBeGreaterThan(0.8 / GOLDEN_SAMPLE_EVERY_REAL_VOLUME);
		expect(golden / sampled).toBeLessThan(1.2 / GOLDEN_SAMPLE_EVERY_REAL_VOLUME);
	});

	it('episodes keep their stories with far more wafers: no golden wafer inside one, the air leak over > 1,000 wafers', () => {
		for (const e of scenario.episodes) {
			if (e.kind === 'part_swap_offset') continue;
			const inside = full.rows.filter((r) => r.chamberCode === e.chamberCode && r.t >= e.start.getTime() && (e.end === null || r.t < e.end.getTime()));
			expect(inside.some((r) => r.golden), e.kind).toBe(false);
		}
		const air = scenario.episodes.find((e) => e.kind === 'air_leak')!;
		const leakWafers = new Set(tail.filter((r) => r.chamberCode === air.chamberCode && r.t >= air.start.getTime()).map((r) => r.waferId));
		expect(leakWafers.size).toBeGreaterThan(1000);
		// No periodic clean interrupts the leak (its story: the door seal, found by nobody yet).
		expect(cleansOf(air.chamberCode).some((t) => t >= air.start.getTime())).toBe(false);
	});
});
