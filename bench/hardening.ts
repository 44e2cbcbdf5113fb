/**
 * Hardening figures (issue 13), printed, not asserted: `node --import tsx bench/hardening.ts [comma] [lock] [stall]`.
 *
 * - comma: the 2 MB "rejection amplification" file (a valid 26-column header, then 77,000 lines of
 *   commas) ingested into a fresh database: time, rejection rows stored, database growth; then the same
 *   bytes again (a refused file's repeat).
 * - lock: a large file (LOCKSTEP_LOCK_ROWS rows, default 40,000, × 250 features) ingested by a child
 *   process while this process writes a row every 100 ms on its own connection with SQLite's
 *   busy_timeout of 5 s: the longest wait for the write lock and the writes that failed.
 * - export: the wafer-table CSV export of a chamber with 77,000 wafer-steps, streamed, while
 *   monitorEventLoopDelay samples the event loop: the longest stall and the time.
 * - stall: the bad-input corpus (tests/fixtures/bad-input plus the generated large members and the comma
 *   file) ingested one after another in this process while perf_hooks' monitorEventLoopDelay samples
 *   the event loop: the longest stall.
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { spawn } from 'node:child_process';
import { monitorEventLoopDelay } from 'node:perf_hooks';
import Database from 'better-sqlite3';
import { migrateLatest, openDb, setDb } from '../src/lib/server/db.ts';
import { ingestFile } from '../src/lib/server/ingest/index.ts';
import { writeLargeCsv } from '../tests/helpers/large-file.ts';
import { commaFile, deepJson, deepJsonValue, overlongLine, tenThousandColumns } from '../tests/fixtures/bad-input/generate.ts';

/**
 * Event-loop stalls, two ways: perf_hooks' monitorEventLoopDelay (wall time; on a loaded machine it also
 * counts time the process waited for a core), and a 5 ms ticker that notes the CPU time this process
 * used between two ticks — the part of a stall spent running, which the machine's load does not inflate
 * (it counts all of the process's threads, GC and file I/O helpers too, so it is an upper bound).
 */
function stallMeter() {
	const h = monitorEventLoopDelay({ resolution: 10 });
	let lastCpu = process.cpuUsage();
	let maxCpuMs = 0;
	const timer = setInterval(() => {
		const cpu = process.cpuUsage(lastCpu);
		maxCpuMs = Math.max(maxCpuMs, (cpu.user + cpu.system) / 1000);
		lastCpu = process.cpuUsage();
	}, 5);
	h.enable();
	return {
		stop() {
			clearInterval(timer);
			h.disable();
			return { wallMs: h.max / 1e6, cpuMs: maxCpuMs };
		}
	};
}

const loadNote = () => `load average ${os.loadavg()[0].toFixed(1)} on ${os.cpus().length} cores`;

function dbBytes(file: string): number {
	return ['', '-wal', '-shm'].reduce((s, ext) => s + (fs.existsSync(file + ext) ? fs.statSync(file + ext).size : 0), 0);
}

async function freshDb(dir: string) {
	const file = path.join(dir, 'lockstep.sqlite');
	const k = openDb({ client: 'better-sqlite3', filename: file, connectionString: null });
	await migrateLatest(k);
	setDb(k);
	const [a] = await k('areas').insert({ code: 'B', name: 'B' }).returning('id');
	const [t] = await k('tools').insert({ code: 'B-T', name: 'B', area_id: a.id ?? a }).returning('id');
	await k('chambers').insert({ code: 'PM1', name: 'PM1', tool_id: t.id ?? t, created_at: Date.now() });
	await k.raw('PRAGMA wal_checkpoint(TRUNCATE)');
	return { k, file };
}

async function comma() {
	const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'lockstep-hard-'));
	const { k, file } = await freshDb(dir);
	const csv = path.join(dir, 'commas.csv');
	fs.writeFileSync(csv, commaFile());
	const before = dbBytes(file);
	const meter = stallMeter();
	let t0 = performance.now();
	const r = await ingestFile(csv, { source: 'api', k });
	const first = performance.now() - t0;
	const stall = meter.stop();
	const rej = Number((await k('ingest_rejections').count({ n: '*' }).first())?.n);
	const ws = Number((await k('wafer_steps').count({ n: '*' }).first())?.n);
	await k.raw('PRAGMA wal_checkpoint(TRUNCATE)');
	const growth = dbBytes(file) - before;
	t0 = performance.now();
	const again = await ingestFile(csv, { source: 'api', k });
	const second = performance.now() - t0;
	console.log(`comma file (${(fs.statSync(csv).size / 1e6).toFixed(2)} MB): status ${r.status}, ${first.toFixed(0)} ms, ${rej} ingest_rejections rows, ${ws} wafer-steps, database growth ${(growth / 1e6).toFixed(2)} MB, longest event-loop stall ${stall.wallMs.toFixed(0)} ms wall / ${stall.cpuMs.toFixed(0)} ms running (${loadNote()})`);
	console.log(`  same bytes again: status ${again.status}, ${second.toFixed(0)} ms; ${r.summary.slice(0, 200)}`);
	await k.destroy();
	setDb(null);
	fs.rmSync(dir, { recursive: true, force: true });
}

async function lock() {
	const rows = Number(process.env.LOCKSTEP_LOCK_ROWS ?? 40_000);
	const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'lockstep-lock-'));
	const { k, file } = await freshDb(dir);
	await k.destroy();
	setDb(null);
	const big = path.join(dir, 'big.csv');
	writeLargeCsv(big, rows, 250);
	const size = fs.statSync(big).size;
	const conn = new Database(file);
	conn.pragma('busy_timeout = 5000');
	conn.exec('create table if not exists bench_probe (at integer)');
	const child = spawn(process.execPath, ['--import', 'tsx', '-e', `
		const { ingestFile } = await import(${JSON.stringify(path.resolve('src/lib/server/ingest/index.ts'))});
		const { openDb } = await import(${JSON.stringify(path.resolve('src/lib/server/db.ts'))});
		const k = openDb({ client: 'better-sqlite3', filename: ${JSON.stringify(file)}, connectionString: null });
		let begun = 0, longest = 0, longestSql = '', first = '';
		k.on('query', (q) => {
			if (/^BEGIN/.test(q.sql)) { begun = performance.now(); first = ''; }
			else if (/^COMMIT/.test(q.sql)) { const d = performance.now() - begun; if (d > longest) { longest = d; longestSql = first; } }
			else if (!first) first = q.sql.slice(0, 60);
		});
		const r = await ingestFile(${JSON.stringify(big)}, { source: 'inbox', k });
		console.log(r.summary + ' Longest transaction ' + Math.round(longest) + ' ms (' + longestSql + ' …)');
		await k.destroy();`], { stdio: ['ignore', 'pipe', 'inherit'] });
	let out = '';
	child.stdout.on('data', (d) => (out += d));
	const done = new Promise<number>((r) => child.on('exit', (c) => r(c ?? 1)));
	let finished = false;
	void done.then(() => (finished = true));
	const t0 = performance.now();
	let maxWait = 0;
	let failed = 0;
	let writes = 0;
	while (!finished) {
		await new Promise((r) => setTimeout(r, 100));
		const s = performance.now();
		try {
			conn.prepare('insert into bench_probe (at) values (?)').run(Date.now());
			writes++;
		} catch {
			failed++;
		}
		maxWait = Math.max(maxWait, performance.now() - s);
	}
	conn.close();
	console.log(`large file (${rows} rows × 250 features, ${(size / 1e6).toFixed(0)} MB) ingested in ${((performance.now() - t0) / 1000).toFixed(1)} s by another process: ${writes} probe writes succeeded, ${failed} failed (busy_timeout 5 s), longest wait for the write lock ${maxWait.toFixed(0)} ms (${loadNote()})`);
	console.log(`  ${out.trim()}`);
	fs.rmSync(dir, { recursive: true, force: true });
}

async function stall() {
	const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'lockstep-stall-'));
	const { k } = await freshDb(dir);
	const fix = 'tests/fixtures/bad-input';
	const files = fs.readdirSync(fix).filter((f) => /\.(csv|json)$/.test(f)).map((f) => path.join(fix, f));
	const gen: Array<[string, Buffer]> = [
		['ten-thousand-columns.csv', tenThousandColumns()],
		['overlong-line.csv', overlongLine()],
		['deep.json', deepJson()],
		['deep-value.json', deepJsonValue()],
		['commas.csv', commaFile()]
	];
	for (const [n, b] of gen) {
		const p = path.join(dir, n);
		fs.writeFileSync(p, b);
		files.push(p);
	}
	let wall = { ms: 0, file: '' };
	let cpu = { ms: 0, file: '' };
	for (const f of files) {
		const meter = stallMeter();
		await ingestFile(f, { source: 'api', k });
		const s = meter.stop();
		if (s.wallMs > wall.ms) wall = { ms: s.wallMs, file: path.basename(f) };
		if (s.cpuMs > cpu.ms) cpu = { ms: s.cpuMs, file: path.basename(f) };
	}
	console.log(`bad-input corpus (${files.length} files): longest event-loop stall ${wall.ms.toFixed(0)} ms wall (${wall.file}), ${cpu.ms.toFixed(0)} ms running (${cpu.file}) (${loadNote()})`);
	await k.destroy();
	setDb(null);
	fs.rmSync(dir, { recursive: true, force: true });
}

async function exportStall() {
	const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'lockstep-export-'));
	const { k } = await freshDb(dir);
	const big = path.join(dir, 'export.csv');
	writeLargeCsv(big, 77_000, 12, 'PM1', 'EX', Date.UTC(2026, 8, 1));
	const r = await ingestFile(big, { source: 'seed', k });
	const { chamberWafersCsvChunks, parseWaferTableParams } = await import('../src/lib/server/views/chamber-wafers.ts');
	const chamber = await k('chambers').where({ code: 'PM1' }).first('id');
	const q = parseWaferTableParams(new URLSearchParams('from=2026-08-01T00:00:00Z&to=2026-12-31T00:00:00Z'));
	if (!q.ok) throw new Error(q.error);
	const meter = stallMeter();
	const t0 = performance.now();
	const { rows, chunks } = await chamberWafersCsvChunks('PM1', Number(chamber.id), null, q.value, k);
	let bytes = 0;
	for await (const c of chunks) bytes += c.length;
	const s = meter.stop();
	console.log(`wafer-table CSV export of ${rows} rows (${(bytes / 1e6).toFixed(1)} MB; ${r.rows.accepted} stored): ${(performance.now() - t0).toFixed(0)} ms, longest event-loop stall ${s.wallMs.toFixed(0)} ms wall / ${s.cpuMs.toFixed(0)} ms running (${loadNote()})`);
	await k.destroy();
	setDb(null);
	fs.rmSync(dir, { recursive: true, force: true });
}

const which = process.argv.slice(2);
const all = which.length === 0;
if (all || which.includes('comma')) await comma();
if (all || which.includes('stall')) await stall();
if (all || which.includes('export')) await exportStall();
if (all || which.includes('lock')) await lock();
