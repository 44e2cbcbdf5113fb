/**
 * Benchmark of the fleet heatmap: 1,000,000 scored wafer-steps over 30 days (48 chambers × 2 recipe
 * steps, about 14.5 wafers an hour each) with their hourly rollups, open alarms and fleet-matching
 * runs, in a temporary SQLite file; then 200 calls of the repository function `getHeatmap` for the
 * 30-day window (and the 24-hour and 7-day windows), and — when `build/` exists — 200 requests of
 * `GET /api/heatmap` against the built server on 127.0.0.1 with a signed-in session.
 *
 * Run alone: node --import tsx bench/heatmap.ts   (prints p50/p95; bench/run.ts may call
 * runHeatmapBench()). Target from the issue: p95 < 100 ms for the 30-day window.
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import Database from 'better-sqlite3';
import { XSadd } from 'ml-xsadd';
import { closeDb, migrateLatest, openDb, setDb } from '../src/lib/server/db.ts';
import type { BenchFigure } from './figure.ts';
import { createUser, percentile, signIn, startServer } from '../tests/load/server.ts';
import { getHeatmap, parseHeatmapParams } from '../src/lib/server/views/heatmap.ts';


const HOUR = 3_600_000;
const DAY = 24 * HOUR;
const TARGET_ROWS = 1_000_000;
const CHAMBERS = 48;
const STEPS_PER_CHAMBER = 2;

/** Fill the schema with a month of scored wafer-steps, written directly with prepared statements. */
function seed(file: string, end: number): { waferSteps: number; rollups: number } {
	const d = new Database(file);
	d.pragma('journal_mode = WAL');
	d.pragma('synchronous = OFF');
	const rng = new XSadd(42);
	const start = end - 30 * DAY;
	d.prepare(`INSERT INTO users (id, username, display_name, role, password_hash, time_zone, created_at, password_changed_at) VALUES ('bench', 'bench', 'Bench', 'engineer', 'x', 'UTC', 0, 0)`).run();
	const areaIns = d.prepare('INSERT INTO areas (code, name) VALUES (?, ?)');
	const toolIns = d.prepare('INSERT INTO tools (code, name, area_id) VALUES (?, ?, ?)');
	const chIns = d.prepare('INSERT INTO chambers (code, name, tool_id, created_at) VALUES (?, ?, ?, 0)');
	const recIns = d.prepare('INSERT INTO recipes (code, name) VALUES (?, ?)');
	const stepIns = d.prepare('INSERT INTO recipe_steps (recipe_id, name, position) VALUES (?, ?, ?)');
	const blIns = d.prepare(
		`INSERT INTO baselines (scope, chamber_id, recipe_step_id, version, status, feature_set_version, alpha, warning_alpha, k, n, scaling,
		 t2_limit, q_limit, t2_warning_limit, q_warning_limit, model, summary_json, built_at) VALUES (?, ?, ?, 1, 'active', 1, 0.01, 0.05, 5, 100, 'autoscale', 15, 20, 11, 14, x'00', '{}', 0)`
	);
	const wsIns = d.prepare(
		`INSERT INTO wafer_steps (wafer_id, lot_id, slot, chamber_id, recipe_step_id, processed_at, golden, feature_set_version, feature_values, scoring_state, created_at)
		 VALUES (?, ?, ?, ?, ?, ?, 0, 1, x'0000000000000000', 'scored', ?)`
	);
	const scIns = d.prepare(
		`INSERT INTO scores (wafer_step_id, baseline_id, chamber_id, recipe_step_id, processed_at, t2, q, t2_limit, q_limit, t2_ratio, q_ratio, phi_ratio, worst_ratio, scored_at, current)
		 VALUES (?, ?, ?, ?, ?, ?, ?, 15, 20, ?, ?, ?, ?, ?, 1)`
	);
	const ruIns = d.prepare(
		`INSERT INTO hourly_rollups (chamber_id, recipe_step_id, hour_at, wafer_count, worst_ratio, worst_t2_ratio, worst_q_ratio, worst_wafer_step_id, alarm_wafer_count)
		 VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)`
	);
	const alIns = d.prepare(
		`INSERT INTO alarms (chamber_id, recipe_step_id, rule, severity, state, baseline_id, opened_at, last_seen_at, first_wafer_step_id, last_wafer_step_id, worst_wafer_step_id, worst_ratio, wafer_count)
		 VALUES (?, ?, 'single', 'alarm', ?, ?, ?, ?, ?, ?, ?, ?, 1)`
	);
	const fmIns = d.prepare(
		`INSERT INTO fleet_matches (run_at, recipe_step_id, chamber_id, fleet_baseline_id, wafers, window_from, window_to, distance, modified_z, flagged, separating_json)
		 VALUES (?, ?, ?, ?, 25, ?, ?, ?, ?, ?, ?)`
	);
	let waferSteps = 0;
	let rollups = 0;
	d.transaction(() => {
		const stepIds: number[][] = [];
		for (let r = 0; r < 3; r++) {
			const rid = Number(recIns.run(`RCP-${r}`, `Recipe ${r}`).lastInsertRowid);
			stepIds.push([Number(stepIns.run(rid, 'main', 1).lastInsertRowid), Number(stepIns.run(rid, 'over', 2).lastInsertRowid)]);
		}
		const chambers: { id: number; steps: number[] }[] = [];
		for (let a = 0; a < 4; a++) {
			const aid = Number(areaIns.run(`A${a}`, `Area ${a}`).lastInsertRowid);
			for (let t = 0; t < 4; t++) {
				const tid = Number(toolIns.run(`T${a}${t}`, `Tool ${a}${t}`, aid).lastInsertRowid);
				for (const l of 'ABC') {
					const id = Number(chIns.run(`T${a}${t}-${l}`, `Chamber ${l}`, tid).lastInsertRowid);
					chambers.push({ id, steps: stepIds[(a * 4 + t) % 3] });
				}
			}
		}
		const fleetBaselines = new Map<number, number>();
		for (const steps of stepIds) for (const s of steps) fleetBaselines.set(s, Number(blIns.run('fleet', null, s).lastInsertRowid));
		const perStream = Math.round(TARGET_ROWS / (CHAMBERS * STEPS_PER_CHAMBER));
		const every = (30 * DAY) / perStream;
		for (const c of chambers) {
			for (const s of c.steps) {
				const bl = Number(blIns.run('chamber', c.id, s).lastInsertRowid);
				let hour = -1;
				let liveAlarm = false; // one live alarm per chamber × step × rule (partial unique index)
				let agg = { n: 0, worst: -1, t2: -1, q: -1, worstId: 0, beyond: 0 };
				const flush = () => {
					if (agg.n === 0) return;
					ruIns.run(c.id, s, hour, agg.n, agg.worst, agg.t2, agg.q, agg.worstId, agg.beyond);
					rollups++;
				};
				for (let i = 0; i < perStream; i++) {
					const at = Math.floor(start + i * every + rng.getFloat() * every * 0.5);
					const id = Number(wsIns.run(`W${c.id}-${s}-${i}`, `L${c.id}-${Math.floor(i / 25)}`, (i % 25) + 1, c.id, s, at, at).lastInsertRowid);
					const t2r = rng.getFloat() * rng.getFloat() * 1.3;
					const qr = rng.getFloat() * rng.getFloat() * 1.3;
					const worst = Math.max(t2r, qr);
					scIns.run(id, bl, c.id, s, at, t2r * 15, qr * 20, t2r, qr, worst * 0.9, worst, at);
					waferSteps++;
					const h = Math.floor(at / HOUR) * HOUR;
					if (h !== hour) {
						flush();
						hour = h;
						agg = { n: 0, worst: -1, t2: -1, q: -1, worstId: 0, beyond: 0 };
					}
					agg.n++;
					if (worst > agg.worst) {
						agg.worst = worst;
						agg.worstId = id;
					}
					agg.t2 = Math.max(agg.t2, t2r);
					agg.q = Math.max(agg.q, qr);
					if (worst > 1) agg.beyond++;
					if (worst > 1.28 && rng.getFloat() < 0.02) {
						const open = !liveAlarm && i > perStream - 400;
						liveAlarm ||= open;
						alIns.run(c.id, s, open ? 'open' : 'closed', bl, at, at + HOUR, id, id, id, worst);
					}
				}
				flush();
			}
		}
		// A fleet-matching run every 6 hours for every step.
		for (let run = start; run <= end; run += 6 * HOUR) {
			for (const c of chambers) {
				for (const s of c.steps) {
					const z = (rng.getFloat() - 0.5) * 6;
					fmIns.run(run, s, c.id, fleetBaselines.get(s)!, run - DAY, run, Math.abs(z) * 2, z, z > 3.5 ? 1 : 0, '[{"feature":"oes_337.1","modifiedZ":4,"offsetSd":2,"flagged":true}]');
				}
			}
		}
	})();
	d.close();
	return { waferSteps, rollups };
}

async function timeHttp(dataDir: string, query: string, runs: number): Promise<number[] | null> {
	if (!fs.existsSync('build/index.js') || process.env.BENCH_NO_HTTP) return null;
	createUser(dataDir, 'bench-viewer', 'viewer', 'bench-password-42');
	const server = await startServer(dataDir, { LOCKSTEP_ANSWER_CACHE: 'off' }); // time the computation, not a kept answer
	try {
		const cookie = await signIn(server.base, 'bench-viewer', 'bench-password-42');
		const times: number[] = [];
		for (let i = 0; i < runs + 5; i++) {
			const t = performance.now();
			const res = await fetch(`${server.base}/api/heatmap?${query}`, { headers: { cookie } });
			if (!res.ok) throw new Error(`GET /api/heatmap → ${res.status}: ${await res.text()}`);
			await res.arrayBuffer();
			if (i >= 5) times.push(performance.now() - t);
		}
		return times.sort((a, b) => a - b);
	} finally {
		await server.stop();
	}
}

export async function runHeatmapBench(): Promise<BenchFigure[]> {
	const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'lockstep-bench-heatmap-'));
	const file = path.join(dir, 'lockstep.sqlite');
	const figures: BenchFigure[] = [];
	try {
		const k = openDb({ client: 'better-sqlite3', filename: file, connectionString: null });
		await migrateLatest(k);
		await k.destroy();
		const end = Date.UTC(2026, 10, 23, 6, 0);
		const t0 = performance.now();
		const { waferSteps, rollups } = seed(file, end);
		if (process.env.BENCH_KEEP) fs.copyFileSync(file, process.env.BENCH_KEEP);
		figures.push({ name: `seed ${waferSteps.toLocaleString('en-US')} scored wafer-steps, ${rollups.toLocaleString('en-US')} rollup rows`, value: (performance.now() - t0) / 1000, unit: 's' });

		const kq = openDb({ client: 'better-sqlite3', filename: file, connectionString: null });
		setDb(kq);
		await kq.raw('ANALYZE');
		for (const [window, runs] of [
			['30d', 200],
			['7d', 200],
			['24h', 200]
		] as const) {
			const parsed = parseHeatmapParams(new URLSearchParams({ window, anchor: 'latest' }));
			if (!parsed.ok) throw new Error(parsed.error);
			const ctx = { now: end + 3 * DAY, timeZone: 'Europe/Vienna' };
			const first = await getHeatmap(parsed.value, ctx, kq);
			const cells = first.groups.flatMap((g) => g.tools.flatMap((t) => t.chambers.flatMap((c) => c.cells))).filter(Boolean).length;
			if (cells === 0) throw new Error('the heatmap came back empty');
			const times: number[] = [];
			for (let i = 0; i < runs; i++) {
				const t = performance.now();
				await getHeatmap(parsed.value, ctx, kq);
				times.push(performance.now() - t);
			}
			times.sort((a, b) => a - b);
			const label = `getHeatmap ${window} (${cells} cells), ${runs} calls`;
			figures.push({ name: `${label}: p50`, value: percentile(times, 50), unit: 'ms' });
			figures.push({ name: `${label}: p95`, value: percentile(times, 95), unit: 'ms', target: window === '30d' ? '< 100 ms' : undefined });
		}
		await closeDb();
		const http = await timeHttp(dir, 'window=30d&anchor=latest', 200);
		if (http) {
			figures.push({ name: 'GET /api/heatmap?window=30d, 200 requests: p50', value: percentile(http, 50), unit: 'ms' });
			figures.push({ name: 'GET /api/heatmap?window=30d, 200 requests: p95', value: percentile(http, 95), unit: 'ms', target: '< 100 ms' });
		} else figures.push({ name: 'GET /api/heatmap (skipped: run `npm run build` first)', value: NaN, unit: 'ms' });
	} finally {
		fs.rmSync(dir, { recursive: true, force: true });
	}
	return figures;
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
	const figures = await runHeatmapBench();
	console.log('Lockstep fleet heatmap benchmark (node ' + process.version + ')');
	for (const f of figures)
		console.log(`${f.name.padEnd(72)} ${(Number.isNaN(f.value) ? '—' : f.value.toFixed(f.unit === 's' ? 1 : 1) + ' ' + f.unit).padStart(12)} ${(f.target ?? '').padStart(10)}`);
}
