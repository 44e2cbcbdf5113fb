/**
 * `npm run load` — the load test: the built server on 127.0.0.1 over a demo fab of its own, many
 * signed-in sessions reading the heatmap, chamber and wafer APIs with autocannon, while the inbox job
 * (a separate process, as in `npm run demo`) ingests large generated files one after another for the
 * whole run. Reports requests/s, p50/p95/p99 latency, errors and non-2xx answers, against the targets
 * 0 errors and p95 < 300 ms.
 *
 *   npm run load                 full: 50 sessions, 60 s, 60,000-row files
 *   npm run load -- --quick      short: 10 sessions, 10 s, 6,000-row files (what CI runs)
 *   options: --duration S --connections N --rows N --data DIR (a seeded data folder to copy)
 *
 * Bounded: every figure above has a cap (≤ 200 connections, ≤ 600 s); all traffic goes to the server
 * this script starts on 127.0.0.1. Exit status 1 when any request failed or answered non-2xx, or
 * (full mode) when p95 missed its target.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { createRequire } from 'node:module';
import { pathToFileURL } from 'node:url';
import Database from 'better-sqlite3';
import { XSadd } from 'ml-xsadd';
import { decodeValues } from '../src/lib/server/feature-values.ts';
import { createUser, percentile, runTsx, signIn, startServer } from '../tests/load/server.ts';

// autocannon is CommonJS without types; this is the part of its API used here.
interface Cannon {
	on(event: 'response', fn: (client: unknown, status: number, bytes: number, ms: number) => void): void;
	stop(): void;
}
interface CannonResult {
	requests: { total: number; average: number };
	errors: number;
	timeouts: number;
	non2xx: number;
	statusCodeStats?: Record<string, { count: number }>;
}
type CannonRequest = { method: 'GET'; setupRequest: (req: { path?: string; headers?: Record<string, string> }, context: Record<string, unknown>) => unknown };
const autocannon = createRequire(import.meta.url)('autocannon') as (
	opts: { url: string; connections: number; duration: number; timeout: number; requests: CannonRequest[] },
	cb: (err: Error | null, res: CannonResult) => void
) => Cannon;

export interface LoadOptions {
	quick?: boolean;
	durationS?: number;
	connections?: number;
	rows?: number;
	/** a data folder with a seeded Lockstep database to copy; default: seed a fresh demo fab */
	fromDataDir?: string;
	log?: (s: string) => void;
}

export interface ApiFigures {
	api: string;
	requests: number;
	perSecond: number;
	p50: number;
	p95: number;
	p99: number;
	errors: number;
	non2xx: number;
}

export interface LoadResult {
	durationS: number;
	connections: number;
	sessions: number;
	apis: ApiFigures[];
	all: ApiFigures;
	ingest: { files: number; waferSteps: number; scored: number; statuses: string[] };
	healthAfter: number;
}

const LOAD_PASSWORD = 'load-password-42';

/** A template row per chamber for one recipe step: the latest stored vector, so generated rows score like real ones. */
function templates(dbFile: string) {
	const d = new Database(dbFile, { readonly: true });
	try {
		const step = d
			.prepare(
				`SELECT s.id, s.name, r.code AS recipe, COUNT(DISTINCT b.chamber_id) AS n FROM baselines b JOIN recipe_steps s ON s.id = b.recipe_step_id JOIN recipes r ON r.id = s.recipe_id
				 WHERE b.status = 'active' AND b.scope = 'chamber' GROUP BY s.id ORDER BY n DESC, s.id LIMIT 1`
			)
			.get() as { id: number; name: string; recipe: string } | undefined;
		if (!step) throw new Error('the data folder has no active baseline to score against');
		const rows = d
			.prepare(
				`SELECT c.code, w.feature_set_version AS v, w.feature_values AS fv FROM wafer_steps w JOIN chambers c ON c.id = w.chamber_id
				 WHERE w.id IN (SELECT MAX(id) FROM wafer_steps WHERE recipe_step_id = ? AND scoring_state = 'scored' GROUP BY chamber_id)`
			)
			.all(step.id) as { code: string; v: number; fv: Buffer }[];
		const latestSet = Math.max(...rows.map((r) => r.v));
		const names = (d.prepare(`SELECT name, kind FROM features WHERE recipe_step_id = ? AND set_version = ? ORDER BY position`).all(step.id, latestSet) as { name: string; kind: string }[]);
		const keep = names.map((f, j) => (f.kind === 'derived' ? -1 : j)).filter((j) => j >= 0);
		return {
			recipe: step.recipe,
			step: step.name,
			columns: keep.map((j) => names[j].name),
			chambers: rows.filter((r) => r.v === latestSet).map((r) => ({ code: r.code, values: keep.map((j) => decodeValues(r.fv)[j]) }))
		};
	} finally {
		d.close();
	}
}

function writeLoadFile(file: string, t: ReturnType<typeof templates>, rows: number, tag: string, seed: number) {
	const rng = new XSadd(seed);
	const out = [['wafer_id', 'lot_id', 'chamber_id', 'recipe', 'step', 'processed_at', ...t.columns].join(',')];
	const end = Date.now() - 60 * 60_000;
	for (let i = 0; i < rows; i++) {
		const c = t.chambers[i % t.chambers.length];
		const at = new Date(end - (rows - i) * 1000).toISOString();
		const cells = c.values.map((v) => (v * (1 + 0.002 * (rng.getFloat() - 0.5))).toPrecision(6));
		out.push(`LD${tag}-${i},LLD${tag}-${Math.floor(i / 25)},${c.code},${t.recipe},${t.step},${at},${cells.join(',')}`);
	}
	fs.writeFileSync(file, out.join('\n') + '\n');
}

function summarise(api: string, times: number[], errors: number, non2xx: number, seconds: number): ApiFigures {
	const s = [...times].sort((a, b) => a - b);
	return { api, requests: s.length, perSecond: s.length / seconds, p50: percentile(s, 50), p95: percentile(s, 95), p99: percentile(s, 99), errors, non2xx };
}

export async function runLoad(opts: LoadOptions = {}): Promise<LoadResult> {
	const log = opts.log ?? ((s: string) => console.log(s));
	const durationS = Math.min(600, opts.durationS ?? (opts.quick ? 10 : 60));
	const connections = Math.min(200, Math.max(3, opts.connections ?? (opts.quick ? 10 : 50)));
	const rows = Math.min(200_000, opts.rows ?? (opts.quick ? 6_000 : 60_000));
	const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'lockstep-load-'));
	const dbFile = path.join(dir, 'lockstep.sqlite');
	let server: Awaited<ReturnType<typeof startServer>> | null = null;
	let worker: ChildProcess | null = null;
	try {
		if (opts.fromDataDir) {
			const src = new Database(path.join(opts.fromDataDir, 'lockstep.sqlite'), { readonly: true });
			await src.backup(dbFile);
			src.close();
		} else {
			log('▸ seeding a demo fab (about 35 s)');
			runTsx(['seeds/run.ts', '--quiet'], { LOCKSTEP_DATA_DIR: dir, NODE_ENV: 'production' });
		}
		const users = Array.from({ length: Math.min(5, connections) }, (_, i) => `load-viewer-${i + 1}`);
		for (const u of users) createUser(dir, u, 'viewer', LOAD_PASSWORD);
		const t = templates(dbFile);
		const d = new Database(dbFile, { readonly: true });
		const chambers = (d.prepare(`SELECT code FROM chambers ORDER BY id`).all() as { code: string }[]).map((r) => r.code);
		const waferIds = (d.prepare(`SELECT id FROM wafer_steps WHERE scoring_state = 'scored' ORDER BY id DESC LIMIT 2000`).all() as { id: number }[]).map((r) => r.id);
		const before = (d.prepare(`SELECT COUNT(*) AS n FROM wafer_steps`).get() as { n: number }).n;
		d.close();

		server = await startServer(dir, { LOCKSTEP_INGEST_CRON: '0 0 1 1 *' });
		const cookies: string[] = [];
		for (let i = 0; i < connections; i++) cookies.push(await signIn(server.base, users[i % users.length], LOAD_PASSWORD));
		log(`▸ ${connections} sessions signed in on ${server.base}; ${durationS} s of load while the inbox job ingests ${rows.toLocaleString('en')}-row files (${t.recipe}/${t.step}, ${t.columns.length} features)`);

		// The ingest side: one file after another in the inbox, one worker process per file, until the load ends.
		const inbox = path.join(dir, 'inbox');
		fs.mkdirSync(inbox, { recursive: true });
		let loadDone = false;
		let files = 0;
		const ingestLoop = (async () => {
			while (!loadDone && files < 50) {
				const name = `load-${String(files + 1).padStart(2, '0')}.csv`;
				writeLoadFile(path.join(inbox, `.${name}`), t, rows, String(files + 1), files + 1);
				fs.renameSync(path.join(inbox, `.${name}`), path.join(inbox, name));
				files++;
				worker = spawn(process.execPath, ['--import', 'tsx', 'jobs/ingest-inbox.ts'], {
					env: { ...process.env, LOCKSTEP_DATA_DIR: dir, LOCKSTEP_INBOX_SETTLE_MS: '0', NODE_ENV: 'production' },
					stdio: 'ignore'
				});
				await new Promise((r) => worker!.on('exit', r));
				worker = null;
			}
		})();

		const series: { api: string; requests: CannonRequest[]; share: number }[] = [
			{ api: 'GET /api/heatmap', share: 0.34, requests: [rotating(cookies, (i) => `/api/heatmap?window=${['24h', '7d', '30d'][i % 3]}&anchor=latest`)] },
			{ api: 'GET /api/chambers/{code}/series, /wafers', share: 0.33, requests: [rotating(cookies, (i) => `/api/chambers/${chambers[i % chambers.length]}/${i % 2 ? 'wafers' : 'series'}`)] },
			{ api: 'GET /api/wafers/{id}', share: 0.33, requests: [rotating(cookies, (i) => `/api/wafers/${waferIds[(i * 7919) % waferIds.length]}`)] }
		];
		let assigned = 0;
		const runs = series.map((s, n) => {
			const c = n === series.length - 1 ? connections - assigned : Math.round(connections * s.share);
			assigned += c;
			const times: number[] = [];
			const started = performance.now();
			const result = new Promise<ApiFigures>((resolve, reject) => {
				const inst = autocannon({ url: server!.base, connections: c, duration: durationS, timeout: 10, requests: s.requests }, (err, res) => {
					if (err) return reject(err);
					resolve(summarise(s.api, times, res.errors + res.timeouts, res.non2xx, (performance.now() - started) / 1000));
				});
				inst.on('response', (_c, _status, _bytes, ms) => times.push(ms));
			});
			return result.then((f) => ({ f, times }));
		});
		const done = await Promise.all(runs);
		loadDone = true;
		await ingestLoop;
		const healthAfter = (await fetch(`${server.base}/api/health`)).status;
		const all = summarise(
			'all',
			done.flatMap((x) => x.times),
			done.reduce((a, x) => a + x.f.errors, 0),
			done.reduce((a, x) => a + x.f.non2xx, 0),
			durationS
		);
		const k = new Database(dbFile, { readonly: true });
		const statuses = (k.prepare(`SELECT original_name || ': ' || status AS s FROM ingest_files WHERE original_name LIKE 'load-%' ORDER BY id`).all() as { s: string }[]).map((r) => r.s);
		const after = (k.prepare(`SELECT COUNT(*) AS n FROM wafer_steps`).get() as { n: number }).n;
		const scored = (k.prepare(`SELECT COUNT(*) AS n FROM wafer_steps WHERE wafer_id LIKE 'LD%' AND scoring_state = 'scored'`).get() as { n: number }).n;
		k.close();
		return { durationS, connections, sessions: cookies.length, apis: done.map((x) => x.f), all, ingest: { files, waferSteps: after - before, scored, statuses }, healthAfter };
	} finally {
		(worker as ChildProcess | null)?.kill('SIGKILL');
		await server?.stop();
		fs.rmSync(dir, { recursive: true, force: true });
	}
}

/** One request template whose path and session change per call; each connection keeps one session. */
function rotating(cookies: string[], pathFor: (i: number) => string): CannonRequest {
	let next = 0;
	let call = 0;
	return {
		method: 'GET',
		setupRequest: (req, context) => {
			if (context.cookie === undefined) context.cookie = cookies[next++ % cookies.length];
			req.path = pathFor(call++);
			req.headers = { ...(req.headers ?? {}), cookie: String(context.cookie), accept: 'application/json' };
			return req;
		}
	};
}

export function formatLoad(r: LoadResult): string {
	const lines = [
		`Load: ${r.sessions} signed-in sessions over ${r.connections} connections for ${r.durationS} s; ingest during the run: ${r.ingest.files} file(s), ${r.ingest.waferSteps.toLocaleString('en')} wafer-steps stored (${r.ingest.scored.toLocaleString('en')} scored)`,
		'| API | requests | requests/s | p50 ms | p95 ms | p99 ms | errors | non-2xx |',
		'|---|---|---|---|---|---|---|---|'
	];
	for (const a of [...r.apis, r.all])
		lines.push(`| ${a.api} | ${a.requests.toLocaleString('en')} | ${a.perSecond.toFixed(0)} | ${a.p50.toFixed(1)} | ${a.p95.toFixed(1)} | ${a.p99.toFixed(1)} | ${a.errors} | ${a.non2xx} |`);
	lines.push(`targets: 0 errors → ${r.all.errors + r.all.non2xx === 0 ? 'met' : 'MISSED'}; p95 < 300 ms → ${r.all.p95 < 300 ? 'met' : 'MISSED'} (${r.all.p95.toFixed(1)} ms); /api/health afterwards → ${r.healthAfter}`);
	lines.push(`ingest files: ${r.ingest.statuses.join(', ')}`);
	return lines.join('\n');
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
	const argv = process.argv.slice(2);
	const num = (flag: string) => {
		const i = argv.indexOf(flag);
		return i >= 0 ? Number(argv[i + 1]) : undefined;
	};
	const data = argv.indexOf('--data');
	const quick = argv.includes('--quick');
	runLoad({ quick, durationS: num('--duration'), connections: num('--connections'), rows: num('--rows'), fromDataDir: data >= 0 ? argv[data + 1] : undefined })
		.then((r) => {
			console.log('\n' + formatLoad(r));
			const failed = r.all.errors + r.all.non2xx > 0 || r.healthAfter !== 200 || (!quick && r.all.p95 >= 300);
			process.exitCode = failed ? 1 : 0;
		})
		.catch((e) => {
			console.error(e);
			process.exitCode = 1;
		});
}
