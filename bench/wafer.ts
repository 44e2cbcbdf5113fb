/**
 * Benchmark of the wafer-step screen's API at 1,000,000 scored wafer-steps: a temporary SQLite file
 * with 10 chambers × 2 recipe steps, real baselines fitted from golden wafers (241 features: 231 OES
 * channels with the actinometry lines, 10 sensors), 10,000 wafer-steps ingested and scored through the
 * real pipeline, and filler scored wafer-steps written directly (a tiny feature vector: they are never
 * opened, they only make the indexes and neighbour look-ups as deep as 1 M rows) up to 1 M. Then 200
 * calls of the repository function `getWaferView` on real wafer-steps (contributions computed from the
 * model each call) and, when `build/` exists, 200 requests of `GET /api/wafers/{id}` against the built
 * server on 127.0.0.1 with a signed-in session.
 *
 * Target from the screens issue: a wafer page's API under 50 ms (read as p95).
 * Run alone: node --import tsx bench/wafer.ts   (bench/run.ts calls runWaferBench()).
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { spawnSync } from 'node:child_process';
import { fileURLToPath, pathToFileURL } from 'node:url';
import Database from 'better-sqlite3';
import { XSadd } from 'ml-xsadd';
import type { Knex } from 'knex';
import { closeDb, migrateLatest, openDb, setDb } from '../src/lib/server/db.ts';
import { ingestFile } from '../src/lib/server/ingest/index.ts';
import { approveBaseline, createDraftBaseline } from '../src/lib/server/baselines.ts';
import { createUser } from '../src/lib/server/users.ts';
import { getWaferView } from '../src/lib/server/views/wafer-view.ts';
import type { BenchFigure } from './figure.ts';
import { percentile, signIn, startServer } from '../tests/load/server.ts';


const DAY = 86_400_000;
const TOTAL = Number(process.env.LOCKSTEP_BENCH_WAFER_ROWS ?? 1_000_000);
const CHAMBERS = Array.from({ length: 10 }, (_, i) => `WX${String(i + 1).padStart(2, '0')}`);
const STEPS = ['main', 'overetch'];
const GOLDEN = 40; // per chamber × step
const REAL_WAFERS = 5_000; // × 2 steps = 10,000 real scored wafer-steps
const CALLS = 200;

function featureNames(): string[] {
	const oes = new Set(['337.1', '656.3', '703.7', '750.4', '777.4', '844.6']);
	for (let j = 0; oes.size < 231; j++) oes.add((200 + j * 3.03).toFixed(1));
	const sensors = ['rf_forward_w', 'rf_reflected_w', 'pressure_mtorr', 'throttle_valve_pos', 'dc_bias_v', 'o2_flow_sccm', 'ar_flow_sccm', 'backside_he_sccm', 'chuck_temp_c', 'wall_temp_c'];
	return [...[...oes].map((w) => `oes_${w}`), ...sensors];
}

function writeCsv(file: string, wafers: number, start: number, span: number, seed: number, prefix: string) {
	const names = featureNames();
	const rng = new XSadd(seed);
	const means = names.map((_, j) => 400 + ((j * 7919) % 3000));
	const lines = [['wafer_id', 'lot_id', 'chamber_id', 'recipe', 'step', 'processed_at', 'rf_on_s', ...names].join(',')];
	for (let i = 0; i < wafers; i++) {
		const at = new Date(start + Math.floor((i / wafers) * span)).toISOString();
		for (const step of STEPS) {
			const cells = means.map((m) => (m * (1 + 0.01 * (rng.getFloat() + rng.getFloat() + rng.getFloat() - 1.5))).toFixed(2));
			lines.push(`${prefix}${i},L${prefix}${Math.floor(i / 25)},${CHAMBERS[i % CHAMBERS.length]},WB-ETCH,${step},${at},41.5,${cells.join(',')}`);
		}
	}
	fs.writeFileSync(file, lines.join('\n') + '\n');
}

async function fitBaselines(k: Knex, userId: string) {
	const groups = await k('wafer_steps').select('chamber_id', 'recipe_step_id').groupBy('chamber_id', 'recipe_step_id');
	for (const g of groups) {
		const ids = await k('wafer_steps').where(g).pluck('id');
		const d = await createDraftBaseline({ chamberId: g.chamber_id, recipeStepId: g.recipe_step_id, waferStepIds: ids, components: 5, builtBy: userId }, k);
		await approveBaseline(d.id, userId, k);
	}
}

/** Filler scored wafer-steps up to TOTAL, interleaved in time with the real ones, per chamber × step. */
function fill(file: string, start: number, span: number): number {
	const d = new Database(file);
	d.pragma('synchronous = OFF');
	const groups = d.prepare(`SELECT b.id AS baseline_id, b.chamber_id, b.recipe_step_id, w.feature_set_version FROM baselines b JOIN wafer_steps w ON w.chamber_id = b.chamber_id AND w.recipe_step_id = b.recipe_step_id WHERE b.status = 'active' GROUP BY b.id`).all() as {
		baseline_id: number;
		chamber_id: number;
		recipe_step_id: number;
		feature_set_version: number;
	}[];
	const have = (d.prepare(`SELECT COUNT(*) AS n FROM scores WHERE current = 1`).get() as { n: number }).n;
	const need = Math.max(0, TOTAL - have);
	const ws = d.prepare(
		`INSERT INTO wafer_steps (wafer_id, lot_id, slot, chamber_id, recipe_step_id, processed_at, golden, feature_set_version, feature_values, scoring_state, created_at) VALUES (?, ?, ?, ?, ?, ?, 0, ?, x'0000000000000000', 'scored', ?)`
	);
	const sc = d.prepare(
		`INSERT INTO scores (wafer_step_id, baseline_id, chamber_id, recipe_step_id, processed_at, t2, q, t2_limit, q_limit, t2_ratio, q_ratio, phi_ratio, worst_ratio, scored_at, current) VALUES (?, ?, ?, ?, ?, ?, ?, 15, 20, ?, ?, ?, ?, ?, 1)`
	);
	const rng = new XSadd(7);
	d.transaction(() => {
		for (let i = 0; i < need; i++) {
			const g = groups[i % groups.length];
			const at = start + Math.floor(rng.getFloat() * span);
			const id = Number(ws.run(`F${i}`, `LF${i >> 5}`, (i % 25) + 1, g.chamber_id, g.recipe_step_id, at, g.feature_set_version, at).lastInsertRowid);
			const t2r = rng.getFloat() * 0.9;
			const qr = rng.getFloat() * 0.9;
			sc.run(id, g.baseline_id, g.chamber_id, g.recipe_step_id, at, t2r * 15, qr * 20, t2r, qr, Math.max(t2r, qr) * 0.9, Math.max(t2r, qr), at);
		}
	})();
	d.exec('ANALYZE');
	const n = (d.prepare(`SELECT COUNT(*) AS n FROM scores WHERE current = 1`).get() as { n: number }).n;
	d.close();
	return n;
}

async function timeHttp(dir: string, ids: number[]): Promise<number[] | null> {
	if (!fs.existsSync('build/index.js') || process.env.BENCH_NO_HTTP) return null;
	const k = openDb({ client: 'better-sqlite3', filename: path.join(dir, 'lockstep.sqlite'), connectionString: null });
	try {
		await createUser({ username: 'bench-viewer', displayName: 'Bench viewer', password: 'bench-password-42', role: 'viewer' }, k);
	} finally {
		await k.destroy();
	}
	const server = await startServer(dir, { LOCKSTEP_ANSWER_CACHE: 'off' }); // time the computation, not the kept answer
	try {
		const cookie = await signIn(server.base, 'bench-viewer', 'bench-password-42');
		const times: number[] = [];
		for (let i = 0; i < ids.length + 5; i++) {
			const t = performance.now();
			const res = await fetch(`${server.base}/api/wafers/${ids[i % ids.length]}`, { headers: { cookie } });
			if (!res.ok) throw new Error(`GET /api/wafers/${ids[i % ids.length]} → ${res.status}: ${await res.text()}`);
			await res.arrayBuffer();
			if (i >= 5) times.push(performance.now() - t);
		}
		return times.sort((a, b) => a - b);
	} finally {
		await server.stop();
	}
}

async function measure(): Promise<BenchFigure[]> {
	const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'lockstep-bench-wafer-'));
	const file = path.join(dir, 'lockstep.sqlite');
	const figures: BenchFigure[] = [];
	try {
		const k = openDb({ client: 'better-sqlite3', filename: file, connectionString: null });
		setDb(k);
		await migrateLatest(k);
		const [a] = await k('areas').insert({ code: 'WB', name: 'Wafer bench' }).returning('id');
		const [t] = await k('tools').insert({ code: 'WB-T', name: 'Wafer bench tool', area_id: a.id }).returning('id');
		for (const code of CHAMBERS) await k('chambers').insert({ code, name: code, tool_id: t.id, created_at: 0 });
		const user = await createUser({ username: 'bench', displayName: 'Bench', password: 'bench-password-1', role: 'engineer' }, k);
		const start = Date.now() - 32 * DAY;
		const golden = path.join(dir, 'golden.csv');
		writeCsv(golden, GOLDEN * CHAMBERS.length, start, DAY, 1, 'G');
		const g = await ingestFile(golden, { source: 'seed', k });
		if (g.rows.accepted !== GOLDEN * CHAMBERS.length * STEPS.length) throw new Error(`golden file: ${g.summary}`);
		await fitBaselines(k, user.id);
		const real = path.join(dir, 'wafers.csv');
		writeCsv(real, REAL_WAFERS, start + 2 * DAY, 29 * DAY, 2, 'W');
		const r = await ingestFile(real, { source: 'seed', k, limitBytes: Infinity });
		if (r.waferSteps.scored !== REAL_WAFERS * STEPS.length) throw new Error(`wafer file: ${r.summary}`);
		await closeDb();

		const t0 = performance.now();
		const scored = fill(file, start + 2 * DAY, 29 * DAY);
		figures.push({ name: `fill to ${scored.toLocaleString('en-US')} scored wafer-steps`, value: (performance.now() - t0) / 1000, unit: 's' });

		const kq = openDb({ client: 'better-sqlite3', filename: file, connectionString: null });
		setDb(kq);
		const pool = (await kq('wafer_steps').where('wafer_id', 'like', 'W%').pluck('id')).map(Number);
		const rng = new XSadd(3);
		const ids = Array.from({ length: CALLS }, () => pool[rng.getUint32() % pool.length]);
		const first = await getWaferView(ids[0], 'rbc', kq);
		if (!first?.contributions || first.spectrum.length < 200) throw new Error('the wafer view came back without contributions or spectrum');
		const times: number[] = [];
		for (const id of ids) {
			const t = performance.now();
			await getWaferView(id, 'rbc', kq);
			times.push(performance.now() - t);
		}
		times.sort((x, y) => x - y);
		figures.push({ name: `getWaferView (241 features, RBC contributions), ${CALLS} calls: p50`, value: percentile(times, 50), unit: 'ms' });
		figures.push({ name: `getWaferView, ${CALLS} calls: p95`, value: percentile(times, 95), unit: 'ms', target: '< 50 ms' });
		await closeDb();
		const http = await timeHttp(dir, ids);
		if (http) {
			figures.push({ name: `GET /api/wafers/{id} at ${(scored / 1e6).toFixed(1)} M scored wafer-steps, ${CALLS} requests: p50`, value: percentile(http, 50), unit: 'ms' });
			figures.push({ name: `GET /api/wafers/{id}, ${CALLS} requests: p95`, value: percentile(http, 95), unit: 'ms', target: '< 50 ms' });
		} else figures.push({ name: 'GET /api/wafers/{id} (skipped: run `npm run build` first)', value: NaN, unit: 'ms' });
	} finally {
		await closeDb();
		fs.rmSync(dir, { recursive: true, force: true });
	}
	return figures;
}

/**
 * Runs in a child process: the baseline-model cache (baselines.ts) is per process and keyed by baseline
 * id, and the other benches in `npm run bench` fill it from their own databases with the same ids.
 */
export async function runWaferBench(): Promise<BenchFigure[]> {
	const r = spawnSync(process.execPath, ['--import', 'tsx', fileURLToPath(import.meta.url), '--json'], { encoding: 'utf8', stdio: ['ignore', 'pipe', 'inherit'], maxBuffer: 16 << 20 });
	if (r.status !== 0) throw new Error(`bench/wafer.ts failed (${r.status})`);
	return JSON.parse(r.stdout.trim().split('\n').pop()!) as BenchFigure[];
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
	const figures = await measure();
	if (process.argv.includes('--json')) {
		console.log(JSON.stringify(figures));
		process.exit(0);
	}
	for (const f of figures) console.log(`${f.name.padEnd(80)} ${(Number.isNaN(f.value) ? '—' : f.value.toFixed(1) + ' ' + f.unit).padStart(12)} ${(f.target ?? '').padStart(10)}`);
}
