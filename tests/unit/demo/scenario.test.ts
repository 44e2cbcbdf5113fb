import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import {
	buildScenario,
	CLEAN_INTERVAL_WAFERS,
	DEFAULT_END,
	EPISODE_CHAMBERS
} from '../../../seeds/demo/index';
import { demo } from './fixture';

const DAY = 86_400_000;

describe('demo scenario', () => {
	const sc = buildScenario();

	it('is the same for the same options and changes with the seed', () => {
		expect(JSON.stringify(buildScenario())).toBe(JSON.stringify(sc));
		const other = buildScenario({ seed: 7 });
		expect(other.maintenance.map((m) => m.at.getTime())).not.toEqual(
			sc.maintenance.map((m) => m.at.getTime())
		);
	});

	it('spans 30 days ending at the fixed default end, or at the end passed in', () => {
		expect(sc.end.toISOString()).toBe(DEFAULT_END.toISOString());
		expect(sc.end.getTime() - sc.start.getTime()).toBe(30 * DAY);
		const s2 = buildScenario({ end: new Date('2027-02-01T12:34:56Z'), days: 21 });
		expect(s2.end.toISOString()).toBe('2027-02-01T12:34:00.000Z');
		expect(s2.end.getTime() - s2.start.getTime()).toBe(21 * DAY);
	});

	it('refuses options it cannot honour', () => {
		expect(() => buildScenario({ seed: 1.5 })).toThrow(RangeError);
		expect(() => buildScenario({ days: 5 })).toThrow(/days/);
		expect(() => buildScenario({ end: new Date('not a date') })).toThrow(/end/);
		expect(() => buildScenario({ realVolumeDays: 11 })).toThrow(/realVolumeDays/);
		expect(() => buildScenario({ realVolumeDays: 1.5 })).toThrow(/realVolumeDays/);
	});

	it('has ≥ 3 areas, ≥ 24 chambers with fab-wide unique codes, each on a known tool', () => {
		expect(sc.areas.length).toBeGreaterThanOrEqual(3);
		expect(sc.chambers.length).toBeGreaterThanOrEqual(24);
		expect(new Set(sc.chambers.map((c) => c.code)).size).toBe(sc.chambers.length);
		const tools = new Set(sc.tools.map((t) => t.code));
		for (const c of sc.chambers) expect(tools.has(c.toolCode)).toBe(true);
		const areas = new Set(sc.areas.map((a) => a.code));
		for (const t of sc.tools) expect(areas.has(t.areaCode)).toBe(true);
	});

	it('has 3 recipes × 2 steps, each recipe run on ≥ 8 chambers', () => {
		expect(sc.recipes.length).toBeGreaterThanOrEqual(3);
		for (const r of sc.recipes) {
			expect(r.steps.length).toBeGreaterThanOrEqual(2);
			expect(sc.chambers.filter((c) => c.recipes.includes(r.code)).length).toBeGreaterThanOrEqual(8);
			for (const st of r.steps) expect(sc.features[r.code][st.name]).toBeDefined();
		}
	});

	it('has people in every role and logs maintenance only by them', () => {
		expect(new Set(sc.people.map((p) => p.role))).toEqual(new Set(['viewer', 'engineer', 'admin']));
		const names = new Set(sc.people.map((p) => p.username));
		for (const m of sc.maintenance) expect(names.has(m.byUsername)).toBe(true);
	});

	it('wet-cleans every chamber by its RF-hours counter, staggered, from a clean before the window', () => {
		const firstInWindow = new Set<number>();
		for (const c of sc.chambers) {
			const cleans = sc.maintenance
				.filter((m) => m.chamberCode === c.code && m.kind === 'wet_clean')
				.map((m) => m.at.getTime());
			expect(cleans[0]).toBeLessThan(sc.start.getTime());
			const inWindow = cleans.filter((t) => t >= sc.start.getTime());
			expect(inWindow.length).toBeGreaterThanOrEqual(2);
			firstInWindow.add(Math.floor((inWindow[0] - sc.start.getTime()) / DAY));
			// The He-leak chamber's clean waits for the seal repair (the story), so its gap may reach 13 days.
			const maxGap = c.code === EPISODE_CHAMBERS.heLeak ? 13 * DAY : 10 * DAY;
			for (let i = 1; i < cleans.length; i++) expect(cleans[i] - cleans[i - 1]).toBeLessThanOrEqual(maxGap);
		}
		expect(firstInWindow.size).toBeGreaterThanOrEqual(4);
		const sorted = sc.maintenance.map((m) => m.at.getTime());
		expect([...sorted].sort((a, b) => a - b)).toEqual(sorted);
	});

	it('ends every complete clean cycle of a chamber at about the same wafer count (a PM counter, not the calendar)', () => {
		// The compressed weeks (the small variant's whole month); the real-volume tail: volume.test.ts.
		const { rows, scenario: sc } = demo();
		const episodic = new Set(sc.episodes.map((e) => e.chamberCode));
		let cycles = 0;
		for (const c of sc.chambers.filter((c) => !episodic.has(c.code))) {
			const step = sc.recipes.find((r) => r.code === c.recipes[0])!.steps[0].name;
			const mine = rows
				.filter((r) => r.chamberCode === c.code && r.step === step)
				.map((r) => r.processedAt.getTime());
			const cleans = sc.maintenance
				.filter((m) => m.chamberCode === c.code && m.kind === 'wet_clean' && m.at >= sc.start)
				.map((m) => m.at.getTime());
			const counts = cleans.slice(1).map((t, i) => mine.filter((x) => x > cleans[i] && x < t).length);
			for (const n of counts) {
				expect(n, c.code).toBeGreaterThanOrEqual(0.85 * CLEAN_INTERVAL_WAFERS[0]);
				expect(n, c.code).toBeLessThanOrEqual(1.1 * CLEAN_INTERVAL_WAFERS[1]);
				expect(n / Math.min(...counts), c.code).toBeLessThan(1.3);
			}
			cycles += counts.length;
		}
		expect(cycles).toBeGreaterThanOrEqual(30);
	});

	it('documents the five episodes on five different chambers, inside the window', () => {
		const kinds = sc.episodes.map((e) => e.kind).sort();
		expect(kinds).toEqual([
			'air_leak',
			'he_backside_leak',
			'o2_mfc_drift',
			'part_swap_offset',
			'rf_match_wear'
		]);
		expect(new Set(sc.episodes.map((e) => e.chamberCode)).size).toBe(5);
		expect(Object.values(EPISODE_CHAMBERS).sort()).toEqual(sc.episodes.map((e) => e.chamberCode).sort());
		for (const e of sc.episodes) {
			expect(e.start.getTime()).toBeGreaterThan(sc.start.getTime());
			expect(e.start.getTime()).toBeLessThan(sc.end.getTime());
			expect(e.title.length).toBeGreaterThan(10);
			expect(e.whatToLookFor.length).toBeGreaterThan(40);
		}
		const air = sc.episodes.find((e) => e.kind === 'air_leak')!;
		expect(sc.end.getTime() - air.start.getTime()).toBeLessThanOrEqual(5 * DAY);
		// The match wear runs over the last week and is still open; wet cleans go on (they do not fix a match).
		const rf = sc.episodes.find((e) => e.kind === 'rf_match_wear')!;
		expect(rf.end).toBeNull();
		expect(sc.end.getTime() - rf.start.getTime()).toBeGreaterThan(5 * DAY);
		expect(sc.end.getTime() - rf.start.getTime()).toBeLessThan(8 * DAY);
		expect(sc.maintenance.filter((m) => m.chamberCode === rf.chamberCode && m.kind !== 'wet_clean')).toEqual(
			[]
		);
		// The swap and the He-leak repair are in the maintenance log.
		const swap = sc.episodes.find((e) => e.kind === 'part_swap_offset')!;
		expect(sc.maintenance.some((m) => m.kind === 'part_swap' && m.chamberCode === swap.chamberCode)).toBe(
			true
		);
		const he = sc.episodes.find((e) => e.kind === 'he_backside_leak')!;
		expect(sc.maintenance.some((m) => m.kind === 'pm' && m.at.getTime() === he.end!.getTime())).toBe(true);
	});

	it('matches the episode table of seeds/demo/README.md (chamber, kind, start, end)', () => {
		const readme = readFileSync('seeds/demo/README.md', 'utf8');
		const utc = (d: Date) => `${d.toISOString().slice(0, 10)} ${d.toISOString().slice(11, 16)} UTC`;
		for (const e of sc.episodes) {
			const row = readme.split('\n').find((l) => new RegExp(`^\\|\\s*${e.chamberCode}\\s*\\|`).test(l));
			expect(row, e.chamberCode).toBeDefined();
			expect(row).toContain(`\`${e.kind}\``);
			expect(row).toContain(utc(e.start));
			if (e.end) expect(row).toContain(utc(e.end));
		}
	});
});
