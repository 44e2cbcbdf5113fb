/**
 * Ingest end to end (issue 4 §8): a generated file of 100,000 wafer-steps × 512 features (480 OES
 * channels including the actinometry lines, so 3 ratios are derived, and 32 sensors) over 10 chambers
 * × 2 recipe steps, ingested through the real pipeline into a temporary SQLite file with an active
 * baseline for every chamber × step: byte checks and SHA-256, parse, validate, store, score, hourly
 * rollups and alarm rules. Prints wafer-steps/s (target ≥ 5,000), peak RSS during the ingest and
 * database bytes per wafer-step; with python3 + numpy, the same parse-validate-store by
 * bench/ingest_numpy.py (no scoring) and the ratio.
 *
 * Run alone: node --import tsx bench/ingest.ts   (bench/run.ts calls runIngestBench()).
 * LOCKSTEP_BENCH_ROWS sets a smaller file; LOCKSTEP_BENCH_NO_BASELINE=1 skips the baselines (then
 * every wafer-step is stored as "no active baseline" and nothing is scored).
 */
import { spawnSync } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { XSadd } from 'ml-xsadd';
import type { Knex } from 'knex';
import { closeDb, migrateLatest, openDb, setDb } from '../src/lib/server/db.ts';
import { ingestFile } from '../src/lib/server/ingest/index.ts';
import { approveBaseline, createDraftBaseline } from '../src/lib/server/baselines.ts';
import type { BenchFigure } from './figure.ts';
import { createUser } from '../src/lib/server/users.ts';


const CHAMBERS = Array.from({ length: 10 }, (_, i) => `BX${String(i + 1).padStart(2, '0')}`);
const STEPS = ['main', 'overetch'];
const GOLDEN_PER_GROUP = 40;

function featureNames(): string[] {
	const lines = [703.7, 750.4, 777.4, 844.6];
	const oes = new Set(lines.map((w) => w.toFixed(1)));
	for (let j = 0; oes.size < 480; j++) oes.add((200 + j * 1.65).toFixed(1));
	const sensors = Array.from({ length: 32 }, (_, j) => `sensor_${String(j + 1).padStart(2, '0')}_${['w', 'mtorr', 'sccm', 'c'][j % 4]}`);
	return [...[...oes].map((w) => `oes_${w}`), ...sensors];
}

/** Write `wafers` wafers × 2 steps; each feature draws from 64 pre-formatted values around its mean. */
async function writeFile(file: string, wafers: number, startMs: number, seed: number, prefix: string): Promise<void> {
	const names = featureNames();
	const rng = new XSadd(seed);
	const pools = names.map((_, j) => {
		const mean = 500 + ((j * 7919) % 4000);
		return Array.from({ length: 64 }, () => (mean * (1 + 0.01 * (rng.getFloat() + rng.getFloat() + rng.getFloat() - 1.5))).toFixed(2));
	});
	const out = fs.createWriteStream(file, { highWaterMark: 1 << 20 });
	const write = (s: string) => (out.write(s) ? Promise.resolve() : new Promise<void>((r) => out.once('drain', () => r())));
	await write(['wafer_id', 'lot_id', 'chamber_id', 'recipe', 'step', 'processed_at', 'rf_on_s', ...names].join(',') + '\n');
	const cells = new Array<string>(names.length);
	let buf = '';
	for (let i = 0; i < wafers; i++) {
		const at = new Date(startMs + i * 50_000).toISOString();
		const chamber = CHAMBERS[i % CHAMBERS.length];
		for (const step of STEPS) {
			for (let j = 0; j < names.length; j++) cells[j] = pools[j][rng.getUint32() & 63];
			buf += `${prefix}${i},L${prefix}${Math.floor(i / 25)},${chamber},BENCH-ETCH,${step},${at},41.5,${cells.join(',')}\n`;
		}
		if (buf.length > 1 << 20) {
			await write(buf);
			buf = '';
		}
	}
	await write(buf);
	await new Promise<void>((r) => out.end(() => r()));
}

async function setUpFab(k: Knex): Promise<string> {
	const [a] = await k('areas').insert({ code: 'BENCH', name: 'Bench' }).returning('id');
	const [t] = await k('tools').insert({ code: 'BENCH-T', name: 'Bench tool', area_id: a.id }).returning('id');
	for (const code of CHAMBERS) await k('chambers').insert({ code, name: code, tool_id: t.id, created_at: Date.now() });
	return (await createUser({ username: 'bench', displayName: 'Bench', password: 'bench-password-1', role: 'engineer' }, k)).id;
}

/** One active baseline per chamber × step from the golden file, so the big file is really scored. */
async function fitBaselines(k: Knex, userId: string): Promise<void> {
	const groups = await k('wafer_steps').select('chamber_id', 'recipe_step_id').groupBy('chamber_id', 'recipe_step_id');
	for (const g of groups) {
		const ids = await k('wafer_steps').where(g).pluck('id');
		const d = await createDraftBaseline({ chamberId: g.chamber_id, recipeStepId: g.recipe_step_id, waferStepIds: ids, components: 5, builtBy: userId }, k);
		await approveBaseline(d.id, userId, k);
	}
}

function numpyRun(csv: string, dir: string): number | undefined {
	const script = fileURLToPath(new URL('./ingest_numpy.py', import.meta.url));
	const r = spawnSync('python3', [script, csv, path.join(dir, 'numpy.sqlite')], { encoding: 'utf8', env: { ...process.env, OMP_NUM_THREADS: '1', OPENBLAS_NUM_THREADS: '1' } });
	if (r.status !== 0) {
		if (r.error || /No module named/.test(r.stderr)) return undefined; // no python3 / numpy here
		throw new Error(`ingest_numpy.py failed:\n${r.stderr}`);
	}
	const j = JSON.parse(r.stdout.trim().split('\n').pop()!);
	return j.rows / j.seconds;
}

export async function runIngestBench(): Promise<BenchFigure[]> {
	const rows = Number(process.env.LOCKSTEP_BENCH_ROWS ?? 100_000);
	const wafers = Math.ceil(rows / STEPS.length);
	const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'lockstep-bench-ingest-'));
	const dbFile = path.join(dir, 'bench.sqlite');
	const k = openDb({ client: 'better-sqlite3', filename: dbFile, connectionString: null });
	setDb(k);
	try {
		await migrateLatest(k);
		const userId = await setUpFab(k);
		const t0 = Date.now() - 40 * 86_400_000;
		const golden = path.join(dir, 'golden.csv');
		await writeFile(golden, GOLDEN_PER_GROUP * CHAMBERS.length, t0, 1, 'G');
		const g = await ingestFile(golden, { source: 'seed', k });
		if (g.rows.accepted !== GOLDEN_PER_GROUP * CHAMBERS.length * STEPS.length) throw new Error(`golden file: ${g.summary}`);
		if (!process.env.LOCKSTEP_BENCH_NO_BASELINE) await fitBaselines(k, userId);
		const big = path.join(dir, 'wafers.csv');
		await writeFile(big, wafers, t0 + 86_400_000, 2, 'W');
		const sizeBytes = fs.statSync(big).size;
		await k.raw('PRAGMA wal_checkpoint(TRUNCATE)');
		const dbBefore = fs.statSync(dbFile).size;

		let peak = process.memoryUsage().rss;
		const sampler = setInterval(() => (peak = Math.max(peak, process.memoryUsage().rss)), 50);
		const start = performance.now();
		const r = await ingestFile(big, { source: 'seed', k, limitBytes: Infinity });
		const seconds = (performance.now() - start) / 1000;
		clearInterval(sampler);
		peak = Math.max(peak, process.memoryUsage().rss);
		if (r.status !== 'done' || r.rows.accepted !== wafers * STEPS.length) throw new Error(`bench file: ${r.summary}`);

		await k.raw('PRAGMA wal_checkpoint(TRUNCATE)');
		const dbBytes = fs.statSync(dbFile).size - dbBefore;
		const perSecond = r.rows.accepted / seconds;
		const np = numpyRun(big, dir);
		console.log(
			`ingest: ${r.rows.accepted.toLocaleString('en')} wafer-steps × 512 features (+3 ratios), ${(sizeBytes / 1048576).toFixed(0)} MB CSV, in ${seconds.toFixed(1)} s; ` +
				`${r.waferSteps.scored.toLocaleString('en')} scored, ${r.alarmsOpened.length} alarms opened`
		);
		return [
			{ name: `ingest ${r.rows.accepted.toLocaleString('en')} wafer-steps × 512 features end to end (check, parse, validate, store, score, rollup)`, value: perSecond, unit: 'wafer-steps/s', target: '≥ 5,000 wafer-steps/s', numpy: np },
			{ name: 'ingest peak memory (RSS during the run)', value: peak / 1048576, unit: 'MB' },
			{ name: 'database bytes per wafer-step (vector, row, indexes, score, rollup share)', value: dbBytes / r.rows.accepted, unit: 'bytes' }
		];
	} finally {
		await closeDb();
		fs.rmSync(dir, { recursive: true, force: true });
	}
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
	runIngestBench().then((figures) => {
		for (const f of figures) {
			const ratio = f.numpy ? `   numpy ${Math.round(f.numpy).toLocaleString('en')} ${f.unit} (Lockstep ÷ numpy = ${(f.value / f.numpy).toFixed(2)})` : '';
			console.log(`${f.name}: ${f.value >= 100 ? Math.round(f.value).toLocaleString('en') : f.value.toFixed(1)} ${f.unit}${f.target ? ` (target ${f.target})` : ''}${ratio}`);
		}
	});
}
