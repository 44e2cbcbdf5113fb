/**
 * The inbox worker killed with SIGKILL at many random points across large files (issue 7, crash):
 * after each kill it is restarted; at the end every wafer-step of every file is stored exactly once,
 * each scored wafer-step has one current score, and the hourly rollups agree with the scores (each
 * rollup's wafer_count equals the scored wafer-steps of its chamber × step × hour, and no rollup is
 * left without wafers).
 *
 * CI kills 5 times; the full run kills 20 times: LOCKSTEP_CRASH_KILLS=20 npx vitest run tests/integration/hardening.
 * LOCKSTEP_CRASH_SEED reproduces a run's kill points (the seed is printed).
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { XSadd } from 'ml-xsadd';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Knex } from 'knex';
import { migrateLatest, openDb } from '../../../src/lib/server/db.ts';
import { ingestFile } from '../../../src/lib/server/ingest/index.ts';
import { approveBaseline, createDraftBaseline } from '../../../src/lib/server/baselines.ts';
import { createUser } from '../../../src/lib/server/users.ts';
import { addChambers } from '../ingest/helpers.ts';
import { crashRounds, spawnTsx } from '../../helpers/crash.ts';

const KILLS = Math.max(1, Math.min(50, Number(process.env.LOCKSTEP_CRASH_KILLS ?? 5)));
const SEED = Number(process.env.LOCKSTEP_CRASH_SEED ?? Date.now() % 1_000_000);
const FILES = ['c-part1.csv', 'c-part2.csv', 'c-part3.csv'];
const ROWS_PER_FILE = 4_000;
const TOTAL = FILES.length * ROWS_PER_FILE;
const OES = Array.from({ length: 180 }, (_, j) => (250 + j * 3.5).toFixed(1));
const COLS = ['wafer_id', 'lot_id', 'chamber_id', 'recipe', 'step', 'processed_at', ...OES.map((w) => `oes_${w}`), 'pressure_mtorr', 'rf_reflected_w'];
const GROUPS = [
	['PM1', 'main'],
	['PM1', 'overetch'],
	['PM2', 'main'],
	['PM2', 'overetch']
] as const;
const T0 = Date.UTC(2026, 9, 1);

function lines(prefix: string, n: number, startMs: number, stepMs: number, seed: number): string {
	const rng = new XSadd(seed);
	const out = [COLS.join(',')];
	for (let i = 0; i < n; i++) {
		const [chamber, step] = GROUPS[i % GROUPS.length];
		const v = OES.map((_, j) => (1000 + j * 3 + 20 * (rng.getFloat() - 0.5)).toFixed(2));
		out.push([`${prefix}${i}`, `L${prefix}${i >> 5}`, chamber, 'CRASH-ETCH', step, new Date(startMs + i * stepMs).toISOString(), ...v, (15 + rng.getFloat() * 0.1).toFixed(3), (2 + rng.getFloat() * 0.1).toFixed(3)].join(','));
	}
	return out.join('\n') + '\n';
}

let dir: string;
let dbFile: string;
/** Run `fn` on a connection of its own to the worker's database (the worker holds none between runs). */
async function withDb<T>(fn: (k: Knex) => Promise<T>): Promise<T> {
	const k = openDb({ client: 'better-sqlite3', filename: dbFile, connectionString: null });
	try {
		return await fn(k);
	} finally {
		await k.destroy();
	}
}

beforeAll(async () => {
	dir = fs.mkdtempSync(path.join(os.tmpdir(), 'lockstep-crash20-'));
	dbFile = path.join(dir, 'lockstep.sqlite');
	await withDb(async (k) => {
		await migrateLatest(k);
		await addChambers(k, ['PM1', 'PM2']);
		// Golden wafers and an active baseline per chamber × step, so the big files are scored and rolled up.
		const golden = path.join(dir, 'golden.csv');
		fs.writeFileSync(golden, lines('G', 30 * GROUPS.length, T0 - 86_400_000, 60_000, 1));
		const g = await ingestFile(golden, { source: 'seed', k });
		expect(g.rows.accepted).toBe(30 * GROUPS.length);
		const user = await createUser({ username: 'crash', displayName: 'Crash', password: 'crash-password-1', role: 'engineer' }, k);
		for (const grp of await k('wafer_steps').select('chamber_id', 'recipe_step_id').groupBy('chamber_id', 'recipe_step_id')) {
			const ids = await k('wafer_steps').where(grp).pluck('id');
			const d = await createDraftBaseline({ chamberId: grp.chamber_id, recipeStepId: grp.recipe_step_id, waferStepIds: ids, components: 3, builtBy: user.id }, k);
			await approveBaseline(d.id, user.id, k);
		}
	});
	const inbox = path.join(dir, 'inbox');
	fs.mkdirSync(inbox);
	FILES.forEach((name, f) => {
		fs.writeFileSync(path.join(inbox, name), lines(`X${f}-`, ROWS_PER_FILE, T0 + f * ROWS_PER_FILE * 45_000, 45_000, 10 + f));
		// Oldest first: the worker takes files in modification-time order.
		const t = new Date(Date.now() - (FILES.length - f) * 60_000);
		fs.utimesSync(path.join(inbox, name), t, t);
	});
}, 120_000);
afterAll(() => fs.rmSync(dir, { recursive: true, force: true }));

const worker = () => spawnTsx(['jobs/ingest-inbox.ts', '--progress'], { LOCKSTEP_DATA_DIR: dir, LOCKSTEP_DB_FILE: dbFile, LOCKSTEP_INBOX_SETTLE_MS: '0' });

/** Rows the worker has got through in this run, counted across the files in inbox order. */
function position(output: string): number {
	let pos = 0;
	for (const m of output.matchAll(/progress (\S+) (\w+) (\d+)/g)) {
		const f = FILES.indexOf(m[1]);
		if (f >= 0) pos = Math.max(pos, f * ROWS_PER_FILE + Number(m[3]));
	}
	return pos;
}

async function check(k: Knex) {
	const total = Number((await k('wafer_steps').where('wafer_id', 'like', 'X%').count({ n: '*' }).first())?.n);
	const distinct = Number((await k.from(k('wafer_steps').where('wafer_id', 'like', 'X%').distinct('wafer_id', 'recipe_step_id').as('d')).count({ n: '*' }).first())?.n);
	const perFile = (await k('ingest_files').whereIn('original_name', FILES).groupBy('original_name', 'status').select('original_name', 'status').count({ n: '*' })) as { original_name: string; status: string; n: number }[];
	const multiScored = await k('scores').where({ current: true }).groupBy('wafer_step_id').having(k.raw('count(*) > 1')).select('wafer_step_id');
	const unscored = Number((await k('wafer_steps').where('wafer_id', 'like', 'X%').whereNot('scoring_state', 'scored').count({ n: '*' }).first())?.n);
	// Unscored rows a kill can leave: only those of a flipped file marked for scoring on restart.
	const unscoredUnmarked = Number(
		(
			await k('wafer_steps as w')
				.join('ingest_files as f', 'f.id', 'w.ingest_file_id')
				.where('w.wafer_id', 'like', 'X%')
				.whereNot('w.scoring_state', 'scored')
				.andWhere((q) => q.whereNull('f.staging_json').orWhereNot('f.status', 'done'))
				.count({ n: '*' })
				.first()
		)?.n
	);
	// Scored wafer-steps per chamber × step × hour, from the scores themselves.
	const fromScores = await k('scores as s')
		.join('wafer_steps as w', 'w.id', 's.wafer_step_id')
		.where({ 's.current': true, 'w.scoring_state': 'scored' })
		.groupBy('s.chamber_id', 's.recipe_step_id', k.raw('(s.processed_at / 3600000) * 3600000'))
		.select('s.chamber_id', 's.recipe_step_id', k.raw('(s.processed_at / 3600000) * 3600000 as hour_at'))
		.count({ n: '*' });
	const rollups = await k('hourly_rollups').select('chamber_id', 'recipe_step_id', 'hour_at', 'wafer_count');
	const key = (r: { chamber_id: number; recipe_step_id: number; hour_at: number | string }) => `${r.chamber_id}/${r.recipe_step_id}/${Number(r.hour_at)}`;
	const expected = new Map(fromScores.map((r) => [key(r as never), Number((r as { n: number }).n)]));
	const actual = new Map(rollups.map((r) => [key(r), Number(r.wafer_count)]));
	return { total, distinct, perFile, multiScored: multiScored.length, unscored, unscoredUnmarked, expected, actual };
}

describe(`inbox worker killed with SIGKILL ${KILLS} times across ${FILES.length} files of ${ROWS_PER_FILE.toLocaleString('en')} rows`, () => {
	it('stores every wafer-step once, scored once, with rollups that match the scores', async () => {
		const rng = new XSadd(SEED);
		// Kill points spread over the rows of all files (the last 3 % left out so a kill can still land).
		const points = Array.from({ length: KILLS }, () => Math.floor(rng.getFloat() * TOTAL * 0.97)).sort((a, b) => a - b);
		console.log(`crash seed ${SEED}: kill points at rows ${points.join(', ')} of ${TOTAL}`);
		const delivered = await crashRounds({
			rounds: points.length,
			start: worker,
			killWhen: (w, round) => position(w.log()) >= points[round],
			// A short random delay so kills land inside chunks, not only at progress lines.
			delayMs: () => Math.floor(rng.getFloat() * 40),
			check: async ({ child, exit, killed }) => {
				if (!killed) expect(exit.code, child.log()).toBe(0);
				// Whatever the moment, the database is never in a half-written state between runs.
				const mid = await withDb(check);
				expect(mid.distinct).toBe(mid.total);
				expect(mid.multiScored).toBe(0);
				expect(mid.total % ROWS_PER_FILE).toBe(0); // whole files only
				// A kill during scoring (after the flip) leaves that file's rest pending, marked so the next
				// start scores it; nothing else is ever unscored.
				expect(mid.unscoredUnmarked).toBe(0);
				expect(Object.fromEntries(mid.actual)).toEqual(Object.fromEntries(mid.expected));
			}
		});
		// Most points must really have killed a worker, or the test proved nothing.
		expect(delivered).toBeGreaterThanOrEqual(Math.ceil(KILLS * 0.6));

		const last = worker();
		const end = await last.exited;
		expect(end.code, last.log()).toBe(0);
		const after = await withDb(check);
		expect(after.total).toBe(TOTAL);
		expect(after.distinct).toBe(TOTAL);
		expect(after.unscored).toBe(0);
		expect(after.multiScored).toBe(0);
		expect(after.perFile.map((r) => `${r.original_name}:${r.status}:${r.n}`).sort()).toEqual(FILES.map((f) => `${f}:done:1`));
		expect(after.actual.size).toBeGreaterThan(100);
		expect(Object.fromEntries(after.actual)).toEqual(Object.fromEntries(after.expected));
		const sum = (m: Map<string, number>) => [...m.values()].reduce((a, b) => a + b, 0);
		expect(sum(after.actual)).toBe(sum(after.expected));
		const processed = fs.readdirSync(path.join(dir, 'inbox', 'processed')).sort();
		expect(processed).toEqual(FILES.flatMap((f) => [f, `${f}.report.json`]).sort());
		expect(fs.readdirSync(path.join(dir, 'inbox')).filter((f) => f.endsWith('.csv'))).toEqual([]);
	}, 600_000);
});
