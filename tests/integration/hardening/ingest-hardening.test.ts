/**
 * Ingest hardening (issue 13, items 1, 3 and 6): rejections stay bounded per file and a file of empty
 * lines is refused fast (and its repeat answered from the stored refusal); the database's write lock is
 * free while a file is read, so a web write (a sign-in attempt) made during a large ingest succeeds at
 * once; a stored wafer × step with other content is a conflict named with its differences, the same
 * content a duplicate.
 */
import fs from 'node:fs';
import path from 'node:path';
import Database from 'better-sqlite3';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../../helpers/temp-db.ts';
import { ingestFile } from '../../../src/lib/server/ingest/index.ts';
import { REJECTION_ROWS_KEPT, REFUSE_AFTER_ROWS } from '../../../src/lib/server/ingest/limits.ts';
import { addChambers, count, csv, HEADER, row, rows, write } from '../ingest/helpers.ts';
import { spawnTsx } from '../../helpers/crash.ts';
import { writeLargeCsv } from '../../helpers/large-file.ts';
import { spoolDir } from '../../../src/lib/server/ingest/spool.ts';

let env: Awaited<ReturnType<typeof useTempDb>>;
beforeAll(async () => {
	env = await useTempDb();
	await addChambers(env.k, ['PM1', 'PM2']);
});
afterAll(() => env.cleanup());

/** A valid header, then `n` lines of nothing but commas (issue 13: 77,000 of them in 2 MB). */
/** `n` good rows whose wafer ids start with `prefix` (times from 2026-11-01, two minutes apart). */
const named = (prefix: string, n: number, spec: Parameters<typeof rows>[2] = {}) => rows(n, 0, spec).map((r) => [`${prefix}${r[0]}`, ...r.slice(1)]);

const commas = (n: number) => `${HEADER.join(',')}\n${`${','.repeat(HEADER.length - 1)}\n`.repeat(n)}`;

describe('rejection amplification', () => {
	it('a file of 77,000 empty lines is refused after the first 1,000, storing at most 1,000 rejections', async () => {
		const file = write(env.dir, 'commas.csv', commas(77_000));
		const filesBefore = await count(env.k, 'ingest_files');
		const r = await ingestFile(file, { source: 'api' });
		expect(r.status).toBe('rejected');
		expect(r.fileError?.reason).toMatch(/^The first 1,000 lines were all refused, so the file is refused without reading the rest\. Most often: \w+ is empty \(1,000×\)/);
		expect(r.fileError).toMatchObject({ line: 2, column: 'wafer_id', kind: 'input' });
		expect(r.rows).toEqual({ total: REFUSE_AFTER_ROWS, accepted: 0, rejected: REFUSE_AFTER_ROWS, duplicate: 0 });
		// every cell error of the rows read is counted; only the first REJECTION_ROWS_KEPT are kept in full
		const cellsPerRow = r.rejectionCounts.filter((c) => c.count === REFUSE_AFTER_ROWS).length;
		expect(cellsPerRow).toBeGreaterThanOrEqual(15);
		expect(r.rejectionsTotal).toBe(r.rejectionCounts.reduce((s, c) => s + c.count, 0));
		expect(r.rejectionCounts.find((c) => c.column === 'wafer_id')).toEqual({ column: 'wafer_id', reason: 'wafer_id is empty', count: REFUSE_AFTER_ROWS });
		const stored = await count(env.k, 'ingest_rejections');
		expect(stored).toBeLessThanOrEqual(REJECTION_ROWS_KEPT + 1);
		expect(await count(env.k, 'wafer_steps')).toBe(0);

		// the same bytes again: the stored refusal, not read again and not recorded again
		const again = await ingestFile(file, { source: 'api', originalName: 'commas-again.csv' });
		expect(again.status).toBe('rejected');
		expect(again.duplicateOfFileId).toBe(r.fileId);
		expect(again.fileError?.reason).toBe(r.fileError?.reason);
		expect(again.summary).toMatch(/was refused, as these same bytes were before \(file #\d+\)/);
		expect(await count(env.k, 'ingest_files')).toBe(filesBefore + 1);
		expect(await count(env.k, 'ingest_rejections')).toBe(stored);
	});

	it('a file with good rows among 5,000 bad ones is read to the end: all counted, 1,000 kept in full', async () => {
		const bad = Array.from({ length: 5_000 }, (_, i) => row(100 + i, { values: ['x', ...row(0).slice(8)] }).slice(0, HEADER.length));
		const file = write(env.dir, 'mixed.csv', csv(HEADER, [row(9_000), ...bad, row(9_001)]));
		const before = await count(env.k, 'ingest_rejections');
		const r = await ingestFile(file, { source: 'api' });
		expect(r.status).toBe('done');
		expect(r.rows).toEqual({ total: 5_002, accepted: 2, rejected: 5_000, duplicate: 0 });
		expect(r.rejectionsTotal).toBe(5_000);
		expect(r.rejectionCounts).toEqual([{ column: 'oes_337.1', reason: 'oes_337.1 is not a number', count: 5_000 }]);
		expect(r.rejections).toHaveLength(200);
		expect((await count(env.k, 'ingest_rejections')) - before).toBe(REJECTION_ROWS_KEPT);
	});

	it('a file refused for the fab state (unknown chamber) is read to the end and never remembered as refused', async () => {
		const file = write(env.dir, 'unknown.csv', csv(HEADER, rows(1_200, 20_000, { chamber: 'PM9' })));
		const r = await ingestFile(file, { source: 'api' });
		expect(r.status).toBe('done');
		expect(r.rows.rejected).toBe(1_200);
		expect(r.rejectionCounts[0]).toMatchObject({ column: 'chamber_id', count: 1_200 });
		await addChambers2(['PM9']);
		const again = await ingestFile(file, { source: 'api' });
		expect(again.rows.accepted).toBe(1_200);
	});
});

async function addChambers2(codes: string[]) {
	const tool = await env.k('tools').first('id');
	for (const code of codes) await env.k('chambers').insert({ code, name: code, tool_id: tool.id, created_at: Date.now() });
}

describe('the write lock during a large ingest', () => {
	it('is free while the file is read: a sign-in attempt written from another connection succeeds at once', async () => {
		const n = 6_000;
		const file = write(env.dir, 'large.csv', csv(HEADER, named('LG', n)));
		// another connection, as the web server's would be, not waiting at all for a lock (busy_timeout 0)
		const web = new Database(path.join(env.dir, 'test.sqlite'));
		web.pragma('busy_timeout = 0');
		const insert = web.prepare("insert into sign_in_attempts (username, client_address, at, success) values ('probe', '10.0.0.1', ?, 0)");
		const outcomes: string[] = [];
		try {
			const r = await ingestFile(file, {
				source: 'inbox',
				onProgress: (p) => {
					if (p.phase !== 'processing') return;
					try {
						insert.run(Date.now());
						outcomes.push('ok');
					} catch (e) {
						outcomes.push((e as Error).message);
					}
				}
			});
			expect(r.rows.accepted).toBe(n);
		} finally {
			web.close();
		}
		expect(outcomes.length).toBeGreaterThan(3);
		expect(outcomes.filter((o) => o !== 'ok')).toEqual([]);
	});

	it('is never held for long while another process ingests a large file: every write from this one succeeds', async () => {
		const n = 10_000;
		const big = path.join(env.dir, 'big.csv');
		writeLargeCsv(big, n, 250);
		const src = path.resolve('src/lib/server');
		const child = spawnTsx(
			[
				'--input-type=module',
				'-e',
				`const { ingestFile } = await import(${JSON.stringify(`${src}/ingest/index.ts`)});
				const { openDb } = await import(${JSON.stringify(`${src}/db.ts`)});
				const k = openDb({ client: 'better-sqlite3', filename: ${JSON.stringify(path.join(env.dir, 'test.sqlite'))}, connectionString: null });
				const r = await ingestFile(${JSON.stringify(big)}, { source: 'inbox', k });
				console.log('ingested ' + r.rows.accepted);
				await k.destroy();`
			],
			{ LOCKSTEP_DATA_DIR: env.dir }
		);
		// The web server's connection as configured (db-config.ts: busy_timeout 5 s), writing every 50 ms
		// as sign-ins would; before the publish was split, the file's one transaction held the lock for
		// the whole ingest and such writes failed with "database is locked".
		const web = new Database(path.join(env.dir, 'test.sqlite'));
		web.pragma('busy_timeout = 5000');
		const insert = web.prepare("insert into sign_in_attempts (username, client_address, at, success) values ('probe2', '10.0.0.2', ?, 0)");
		let finished = false;
		const exited = child.exited.then((e) => ((finished = true), e));
		const waits: number[] = [];
		const failures: string[] = [];
		const started = performance.now();
		try {
			while (!finished) {
				await new Promise((r) => setTimeout(r, 50));
				const t = performance.now();
				try {
					insert.run(Date.now());
				} catch (e) {
					failures.push((e as Error).message);
				}
				waits.push(performance.now() - t);
			}
		} finally {
			web.close();
		}
		const elapsed = performance.now() - started;
		const exit = await exited;
		expect(exit.code, child.log()).toBe(0);
		expect(child.log()).toContain(`ingested ${n}`);
		expect(failures).toEqual([]);
		expect(waits.length).toBeGreaterThan(10);
		// The lock is held a batch (or the one-statement flip) at a time: the longest wait is a small part
		// of the ingest, on a quiet machine or a loaded one alike (one transaction made it nearly all of it).
		const longest = Math.max(...waits);
		console.log(`write lock: ${waits.length} writes during a ${(elapsed / 1000).toFixed(1)} s ingest, longest wait ${longest.toFixed(0)} ms`);
		expect(longest).toBeLessThan(0.35 * elapsed);
	}, 120_000);

	it('a file refused while it is read has written nothing (stored whole or not at all)', async () => {
		const before = { ws: await count(env.k, 'wafer_steps'), steps: await count(env.k, 'recipe_steps') };
		const good = named('CUT', 3_000, { recipe: 'NEW-RECIPE' }).map((r) => r.join(','));
		const text = `${HEADER.join(',')}\n${good.join('\n')}\n"unclosed,${row(1).slice(1).join(',')}\n`;
		const r = await ingestFile(write(env.dir, 'cut.csv', text), { source: 'inbox' });
		expect(r.status).toBe('rejected');
		expect(await count(env.k, 'wafer_steps')).toBe(before.ws);
		expect(await count(env.k, 'recipe_steps')).toBe(before.steps);
		expect(fs.readdirSync(spoolDir()).filter((f) => f.endsWith('.stage'))).toEqual([]);
	});
});

describe('a conflicting row is not a duplicate', () => {
	it('the same content is a no-op; another chamber, lot, time or values is refused with the differences', async () => {
		const first = await ingestFile(write(env.dir, 'c1.csv', csv(HEADER, rows(3, 500))), { source: 'api' });
		expect(first.rows.accepted).toBe(3);
		const ids = ['W00500', 'W00501', 'W00502'];
		const storedBefore = await env.k('wafer_steps').whereIn('wafer_id', ids).orderBy('wafer_id').select();
		const conflicting = row(501, { chamber: 'PM2', lot: 'LX', at: '2026-11-03T00:00:00Z' });
		const values = row(502);
		values[8] = '9999';
		const r = await ingestFile(write(env.dir, 'c2.csv', csv(HEADER, [row(500), conflicting, values])), { source: 'api' });
		expect(r.rows).toEqual({ total: 3, accepted: 0, rejected: 2, duplicate: 1 });
		expect(r.duplicates.map((d) => d.waferId)).toEqual(['W00500']);
		const [a, b] = r.rejections;
		expect(a).toMatchObject({ line: 3, column: 'wafer_id', value: 'W00501' });
		expect(a.reason).toMatch(/is already stored \(file #\d+\) with other content — chamber_id PM2 ≠ stored PM1; lot_id LX ≠ stored L\d+; processed_at 2026-11-03T00:00:00\.000Z ≠ stored /);
		expect(b.reason).toMatch(/oes_656\.3 9999 ≠ stored /);
		expect(r.rejectionCounts).toEqual([{ column: 'wafer_id', reason: 'conflicts with a stored wafer × step (same wafer and step, other content)', count: 2 }]);
		const storedAfter = await env.k('wafer_steps').whereIn('wafer_id', ids).orderBy('wafer_id').select();
		expect(storedAfter).toEqual(storedBefore);
	});
});

describe('a file written straight into the inbox', () => {
	it('is not taken while cut inside a line, nor while it grows; once complete every row is stored as written', async () => {
		const { runInbox } = await import('../../../jobs/ingest-inbox.ts');
		const inbox = path.join(env.dir, 'inbox');
		fs.mkdirSync(inbox, { recursive: true });
		const all = rows(20, 700);
		const text = csv(HEADER, all);
		const cutAt = text.indexOf('15.0', text.indexOf('W00711')) + 2; // inside pressure_mtorr of the 12th row
		const file = path.join(inbox, 'direct.csv');
		fs.writeFileSync(file, text.slice(0, cutAt));
		const opts = { inboxDir: inbox, settleMs: 0, stableMs: 150, incompleteGraceMs: 60_000, log: () => {} };
		expect(await runInbox(opts)).toEqual([]);
		expect(fs.existsSync(file)).toBe(true);
		expect(await env.k('wafer_steps').where('wafer_id', 'like', 'W007%').count({ n: '*' }).first()).toEqual({ n: 0 });

		// Grows (a complete line) between the two scans of a run: left for the next run.
		const more = text.indexOf('\n', cutAt) + 1;
		const growing = runInbox(opts);
		setTimeout(() => fs.appendFileSync(file, text.slice(cutAt, more)), 50);
		expect(await growing).toEqual([]);

		fs.appendFileSync(file, text.slice(more));
		const [o] = await runInbox(opts);
		expect(o.report.rows).toEqual({ total: 20, accepted: 20, rejected: 0, duplicate: 0 });
		const stored = await env.k('wafer_steps').where({ wafer_id: 'W00711' }).first('feature_values');
		const pressure = new Float64Array(new Uint8Array(stored.feature_values).buffer)[HEADER.indexOf('pressure_mtorr') - 7];
		expect(pressure).toBe(Number(all[11][HEADER.indexOf('pressure_mtorr')]));
	});
});

describe('orphan spool files', () => {
	it('of a process that is gone are swept at start; a live process keeps its own', async () => {
		const { spawnSync } = await import('node:child_process');
		const { sweepSpool } = await import('../../../src/lib/server/ingest/spool.ts');
		const dead = spawnSync(process.execPath, ['-e', 'console.log(process.pid)'], { encoding: 'utf8' });
		const deadPid = Number(dead.stdout.trim());
		const root = path.dirname(spoolDir());
		const orphanDir = path.join(root, String(deadPid));
		fs.mkdirSync(orphanDir, { recursive: true });
		fs.writeFileSync(path.join(orphanDir, 'killed-upload.csv'), 'wafer_id\n');
		fs.writeFileSync(path.join(orphanDir, 'killed.stage'), Buffer.alloc(16));
		const mine = path.join(spoolDir(), 'in-use.csv');
		fs.writeFileSync(mine, 'wafer_id\n');
		try {
			expect(sweepSpool()).toBeGreaterThanOrEqual(2);
			expect(fs.existsSync(orphanDir)).toBe(false);
			expect(fs.existsSync(mine)).toBe(true);
		} finally {
			fs.rmSync(mine, { force: true });
		}
	});
});

describe('an interrupted publish', () => {
	it('is undone at start when it had not flipped, and its scoring finished when it had', async () => {
		const { recoverInterruptedIngests } = await import('../../../src/lib/server/ingest/index.ts');
		const k = env.k;
		// A file that reached staging: its row, a recipe step it created, staged rows.
		const [recipe] = await k('recipes').insert({ code: 'HALF-R', name: 'HALF-R' }).returning('id');
		const recipeId = Number(recipe.id ?? recipe);
		const [step] = await k('recipe_steps').insert({ recipe_id: recipeId, name: 'main', position: 0, feature_set_version: 1 }).returning('id');
		const stepId = Number(step.id ?? step);
		await k('features').insert({ recipe_step_id: stepId, set_version: 1, position: 0, name: 'oes_750.4', kind: 'oes', wavelength_nm: 750.4, unit: null });
		const [f] = await k('ingest_files')
			.insert({ source: 'inbox', original_name: 'half.csv', sha256: 'a'.repeat(64), size_bytes: 10, status: 'processing', received_at: Date.now(), staging_json: JSON.stringify({ phase: 'staging', created: { recipeIds: [recipeId], recipeStepIds: [stepId], chamberIds: [] } }) })
			.returning('id');
		const halfId = Number(f.id ?? f);
		const chamber = await k('chambers').where({ code: 'PM1' }).first('id');
		await k('ingest_staged_rows').insert({ ingest_file_id: halfId, wafer_id: 'HALF1', lot_id: 'L', chamber_id: chamber.id, recipe_step_id: stepId, processed_at: Date.now() - 1000, feature_set_version: 1, feature_values: Buffer.alloc(8), created_at: Date.now() });
		// A flipped file whose scoring was cut off: its rows pending.
		const flipped = await ingestFile(write(env.dir, 'flipped.csv', csv(HEADER, rows(4, 900))), { source: 'inbox' });
		await k('wafer_steps').where({ ingest_file_id: flipped.fileId }).update({ scoring_state: 'pending' });
		await k('ingest_files').where({ id: flipped.fileId }).update({ staging_json: JSON.stringify({ phase: 'scoring' }) });

		expect(await recoverInterruptedIngests(k, ['upload', 'api'])).toEqual({ undone: 0, scored: 0 }); // not theirs
		expect(await recoverInterruptedIngests(k, ['inbox'])).toEqual({ undone: 1, scored: 1 });
		expect(await k('ingest_files').where({ id: halfId }).first()).toBeUndefined();
		expect(await count(k, 'ingest_staged_rows')).toBe(0);
		expect(await k('recipe_steps').where({ id: stepId }).first()).toBeUndefined();
		expect(await k('recipes').where({ id: recipeId }).first()).toBeUndefined();
		expect(await k('wafer_steps').where({ ingest_file_id: flipped.fileId, scoring_state: 'pending' }).first()).toBeUndefined();
		expect((await k('ingest_files').where({ id: flipped.fileId }).first('staging_json')).staging_json).toBeNull();
	});
});

describe('a JSON body nested millions deep', () => {
	it('is refused by the depth scan before JSON.parse, with the event loop never held long', async () => {
		const { monitorEventLoopDelay } = await import('node:perf_hooks');
		const lines = 5_000; // 5,000,000 deep in lines of 1,000 brackets (no line over the 1 MB limit)
		const body = `{"rows":\n${`${'['.repeat(1000)}\n`.repeat(lines)}${`${']'.repeat(1000)}\n`.repeat(lines)}}`;
		const file = write(env.dir, 'deep.json', body);
		const h = monitorEventLoopDelay({ resolution: 10 });
		h.enable();
		const r = await ingestFile(file, { source: 'api' });
		h.disable();
		expect(r.status).toBe('rejected');
		expect(r.fileError?.reason).toMatch(/^The JSON body is nested more than 32 levels deep \(at character \d+\)/);
		expect(r.fileError?.line).toBe(2);
		console.log(`deep JSON: longest event-loop stall ${(h.max / 1e6).toFixed(0)} ms`);
	});
});
