/**
 * The heatmap, chamber and wafer-step repositories on a small scored fab (small-fab.ts): what the
 * screens show must equal what the scores and rollups say, computed here independently from the rows.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../../helpers/temp-db.ts';
import { buildSmallFab, HOUR, N2 } from './small-fab.ts';
import { getHeatmap, parseHeatmapParams, type HeatmapQuery } from '../../../src/lib/server/views/heatmap.ts';
import { planBuckets, localDayStart } from '../../../src/lib/server/views/time-buckets.ts';
import { getChamberHeader, getChamberSeries, parseChamberRange, pickStep } from '../../../src/lib/server/views/chamber-view.ts';
import { chamberWafersCsv, listChamberWafers, parseWaferTableParams } from '../../../src/lib/server/views/chamber-wafers.ts';
import { getWaferView } from '../../../src/lib/server/views/wafer-view.ts';
import { logMaintenance } from '../../../src/lib/server/maintenance.ts';
import Papa from 'papaparse';

let env: Awaited<ReturnType<typeof useTempDb>>;
let fab: Awaited<ReturnType<typeof buildSmallFab>>;
const q = (o: Partial<HeatmapQuery> = {}): HeatmapQuery => ({ window: '24h', anchor: 'auto', end: null, area: null, recipe: null, step: null, ...o });

beforeAll(async () => {
	env = await useTempDb();
	fab = await buildSmallFab(env.k);
	await logMaintenance({ chamberId: fab.chambers[0].id, kind: 'wet_clean', at: fab.start + 30 * HOUR, userId: fab.user, comment: 'test clean' }, env.k);
	const fleetBaseline = fab.baselines[0];
	for (const [i, c] of fab.chambers.entries())
		await env.k('fleet_matches').insert({ run_at: fab.end - HOUR, recipe_step_id: fab.recipeStepId, chamber_id: c.id, fleet_baseline_id: fleetBaseline, wafers: 25, window_from: fab.start, window_to: fab.end, distance: i === 2 ? 9 : 1, modified_z: i === 2 ? 5.2 : 0.3, flagged: i === 2, separating_json: JSON.stringify([{ feature: 'oes_656.3', modifiedZ: 6, offsetSd: 2.5, flagged: true }]) });
});
afterAll(() => env.cleanup());

describe('time buckets', () => {
	it('ends the 24 h window with the hour that holds the end instant', () => {
		const p = planBuckets('24h', Date.UTC(2026, 0, 1, 6, 30), 'UTC');
		expect(p.starts).toHaveLength(24);
		expect(p.starts[23]).toBe(Date.UTC(2026, 0, 1, 6));
		expect(p.to).toBe(Date.UTC(2026, 0, 1, 7));
	});
	it('starts day columns at local midnight (Europe/Vienna is UTC+1 in January)', () => {
		expect(localDayStart(Date.UTC(2026, 0, 10, 12), 'Europe/Vienna')).toBe(Date.UTC(2026, 0, 9, 23));
		const p = planBuckets('30d', Date.UTC(2026, 0, 10, 12), 'Europe/Vienna');
		expect(p.starts[29]).toBe(Date.UTC(2026, 0, 9, 23));
		expect(p.starts[0]).toBe(Date.UTC(2026, 0, 9, 23) - 29 * 86_400_000);
	});
});

describe('heatmap', () => {
	it('refuses a bad window or end and names the parameter', () => {
		const a = parseHeatmapParams(new URLSearchParams({ window: '2h' }));
		expect(a.ok).toBe(false);
		if (!a.ok) expect(a.param).toBe('window');
		const b = parseHeatmapParams(new URLSearchParams({ end: 'yesterday' }));
		expect(b.ok).toBe(false);
		if (!b.ok) expect(b.param).toBe('end');
	});

	it('anchors at the latest data when nothing ran in the window before now, and says so', async () => {
		const v = await getHeatmap(q(), { now: fab.end + 10 * 86_400_000, timeZone: 'UTC' }, env.k);
		expect(v.anchor).toBe('latest');
		expect(v.to).toBeGreaterThan(fab.end - HOUR);
		expect(v.to).toBeLessThanOrEqual(fab.end + HOUR);
		const now = await getHeatmap(q({ anchor: 'now' }), { now: fab.end + 10 * 86_400_000, timeZone: 'UTC' }, env.k);
		expect(now.anchor).toBe('now');
		expect(now.groups[0].tools[0].chambers.every((c) => c.cells.every((x) => x === null))).toBe(true);
	});

	it('gives each hour cell the rollup of that hour: count, worst ratio and worst wafer', async () => {
		const v = await getHeatmap(q({ end: fab.end - 1 }), { now: fab.end, timeZone: 'UTC' }, env.k);
		const ch2 = v.groups[0].tools[0].chambers.find((c) => c.code === 'CH2')!;
		for (let b = 0; b < v.starts.length; b++) {
			const from = v.starts[b];
			const scores = await env.k('scores').where({ chamber_id: ch2.id, current: true }).andWhere('processed_at', '>=', from).andWhere('processed_at', '<', from + HOUR).select('wafer_step_id', 'worst_ratio');
			const cell = ch2.cells[b];
			if (scores.length === 0) {
				expect(cell).toBeNull();
				continue;
			}
			const worst = scores.reduce((m, s) => (s.worst_ratio > m.worst_ratio ? s : m));
			expect(cell!.n).toBe(scores.length);
			expect(cell!.r).toBeCloseTo(worst.worst_ratio, 12);
			expect(cell!.worst).toBe(worst.wafer_step_id);
			expect(cell!.worstWafer).toMatch(/^PCH2-/);
		}
		// The leak hours are far beyond the limit; the open alarm touches them.
		const last = ch2.cells[ch2.cells.length - 1]!;
		expect(last.r).toBeGreaterThan(1);
		expect(last.beyond).toBe(last.n);
		expect(ch2.openAlarms).toBeGreaterThan(0);
		expect(last.alarms).toBeGreaterThan(0);
	});

	it('aggregates hours into day columns: sums of counts, maximum of ratios', async () => {
		const v = await getHeatmap(q({ window: '30d', end: fab.end - 1 }), { now: fab.end, timeZone: 'UTC' }, env.k);
		const row = v.groups[0].tools[0].chambers.find((c) => c.code === 'CH1')!;
		const total = row.cells.reduce((s, c) => s + (c?.n ?? 0), 0);
		const scored = Number((await env.k('scores').where({ chamber_id: row.id, current: true }).andWhere('processed_at', '>=', v.from).andWhere('processed_at', '<', v.to).count({ n: '*' }).first())!.n);
		expect(total).toBe(scored);
		const dayMax = Math.max(...row.cells.map((c) => c?.r ?? -1));
		const maxScore = (await env.k('scores').where({ chamber_id: row.id, current: true }).andWhere('processed_at', '>=', v.from).andWhere('processed_at', '<', v.to).max({ m: 'worst_ratio' }).first())!.m;
		expect(dayMax).toBeCloseTo(maxScore, 12);
	});

	it('marks the requalify chamber and the chamber flagged by the latest fleet match', async () => {
		const v = await getHeatmap(q({ end: fab.end - 1 }), { now: fab.end, timeZone: 'UTC' }, env.k);
		const rows = v.groups[0].tools[0].chambers;
		expect(rows.find((c) => c.code === 'CH1')!.requalify?.reason).toBe('Wet clean');
		expect(rows.find((c) => c.code === 'CH3')!.fleet?.modifiedZ).toBeCloseTo(5.2, 12);
		expect(rows.find((c) => c.code === 'CH2')!.fleet).toBeNull();
		expect(v.drifting.map((d) => d.chamberCode)).toEqual(['CH3']);
		expect(v.drifting[0].separating).toEqual(['oes_656.3']);
		expect(v.alarmsByAge.total).toBe(v.alarmsByAge.bands.reduce((s, b) => s + b.count, 0));
	});

	it('filters by area and by a recipe it does not know (no chambers)', async () => {
		const none = await getHeatmap(q({ recipe: 'NOPE' }), { now: fab.end, timeZone: 'UTC' }, env.k);
		expect(none.groups).toEqual([]);
		const other = await getHeatmap(q({ area: 'XX' }), { now: fab.end, timeZone: 'UTC' }, env.k);
		expect(other.groups).toEqual([]);
	});
});

describe('chamber screen', () => {
	it('reads the header, RF-hours since the wet clean and the steps it ran', async () => {
		const h = (await getChamberHeader('CH1', env.k))!;
		expect(h.steps.map((s) => s.key)).toEqual(['RX-1/main']);
		// 60 s of RF per wafer-step; the clean is at start + 30 h, wafers every 15 min until start + 48 h.
		const after = await env.k('wafer_steps').where({ chamber_id: h.chamber.id }).andWhere('processed_at', '>', fab.start + 30 * HOUR).count({ n: '*' }).first();
		expect(h.rfHoursSinceWetClean).toBeCloseTo((Number(after!.n) * 60) / 3600, 9);
		expect(await getChamberHeader('NOPE', env.k)).toBeNull();
	});

	it('gives the series with limits, an EWMA per point and the marks', async () => {
		const h = (await getChamberHeader('CH2', env.k))!;
		const step = (await pickStep(h, null, null, env.k))!;
		const s = await getChamberSeries({ chamberId: h.chamber.id, recipeStepId: step.id, from: fab.start, to: fab.end }, env.k);
		expect(s.at).toHaveLength(192);
		expect(s.ewmaQ).toHaveLength(192);
		expect([...s.at].sort((a, b) => a - b)).toEqual(s.at);
		// The leak drives Q far up: its EWMA ends above its limit.
		expect(s.ewmaQ[191]!).toBeGreaterThan(s.ewmaQUpper[191]!);
		expect(s.baselines.map((b) => b.status)).toEqual(['active']);
		const bad = parseChamberRange(new URLSearchParams({ from: '2026-12-01', to: '2026-11-01' }), null, fab.end);
		expect(bad.ok).toBe(false);
	});

	it('sorts, filters and pages the wafer table in SQL, and exports the filtered rows as CSV', async () => {
		const h = (await getChamberHeader('CH2', env.k))!;
		const parse = (o: Record<string, string>) => {
			const p = parseWaferTableParams(new URLSearchParams(o));
			if (!p.ok) throw new Error(p.error);
			return p.value;
		};
		const all = await env.k('scores').where({ chamber_id: h.chamber.id, current: true }).orderBy('worst_ratio', 'desc').select('wafer_step_id', 'worst_ratio');
		const p1 = await listChamberWafers(h.chamber.id, null, parse({ sort: 'worst_ratio', dir: 'desc', size: '10', state: 'beyond' }), env.k);
		const beyond = all.filter((s) => s.worst_ratio > 1);
		expect(p1.total).toBe(beyond.length);
		expect(p1.rows.map((r) => r.id)).toEqual(beyond.slice(0, 10).map((s) => s.wafer_step_id));
		const p2 = await listChamberWafers(h.chamber.id, null, parse({ sort: 'worst_ratio', dir: 'desc', size: '10', state: 'beyond', page: '2' }), env.k);
		expect(p2.rows.map((r) => r.id)).toEqual(beyond.slice(10, 20).map((s) => s.wafer_step_id));
		const asc = await listChamberWafers(h.chamber.id, null, parse({ sort: 'wafer_id', dir: 'asc', size: '5', q: 'PCH2' }), env.k);
		expect(asc.rows.map((r) => r.waferId)).toEqual(['PCH2-000', 'PCH2-001', 'PCH2-002', 'PCH2-003', 'PCH2-004']);
		const { csv, rows } = await chamberWafersCsv('CH2', h.chamber.id, null, parse({ state: 'beyond', sort: 'worst_ratio' }), env.k);
		const parsed = Papa.parse<Record<string, string>>(csv, { header: true, skipEmptyLines: true });
		expect(rows).toBe(beyond.length);
		expect(parsed.data).toHaveLength(beyond.length);
		expect(parsed.data.every((r) => r.state === 'beyond' && r.chamber === 'CH2')).toBe(true);
		expect(parseWaferTableParams(new URLSearchParams({ sort: 'password_hash' })).ok).toBe(false);
	});
});

describe('wafer-step screen', () => {
	it('names the nitrogen bands as the top contributors of a leaking wafer and shows the safety notice', async () => {
		const leak = fab.prod.CH2[191];
		const v = (await getWaferView(leak.id, 'rbc', env.k))!;
		expect(v.stats!.state).toBe('alarm');
		const top = v.contributions![v.contributions!.primary].slice(0, 3).map((c) => c.feature);
		expect(new Set(top)).toEqual(new Set(N2));
		expect(v.contributions!.q[0].lines[0].element).toBe('N2');
		expect(v.leak?.gases).toEqual(['air']);
		expect(v.leak?.channels).toEqual(expect.arrayContaining(N2.slice(0, 1)));
		expect(v.spectrum.filter((p) => p.highlighted).map((p) => p.feature)).toEqual(expect.arrayContaining(N2));
		expect(v.sensors.map((s) => s.feature)).toEqual(['pressure_mtorr', 'rf_forward_w']);
		expect(v.actinometry.map((a) => a.name)).toEqual(['ratio_O777_Ar750', 'ratio_O845_Ar750', 'ratio_F704_Ar750']);
		expect(v.alarms.length).toBeGreaterThan(0);
		expect(v.previous?.id).toBe(fab.prod.CH2[190].id);
		expect(v.next).toBeNull();
	});

	it('agrees with the stored score, and a quiet wafer has no leak notice', async () => {
		const w = fab.prod.CH1[10];
		const v = (await getWaferView(w.id, 'complete', env.k))!;
		const s = await env.k('scores').where({ wafer_step_id: w.id, current: true }).first();
		expect(v.stats!.t2).toBeCloseTo(s.t2, 9);
		expect(v.stats!.q).toBeCloseTo(s.q, 9);
		// Complete decomposition: the Q parts add up to Q (Alcala & Qin 2011, table 1); the top 12 are all features.
		expect(v.contributions!.q.reduce((a, c) => a + c.value, 0)).toBeCloseTo(s.q, 9);
		expect(v.leak).toBeNull();
		expect(await getWaferView(999_999, 'rbc', env.k)).toBeNull();
	});
});
