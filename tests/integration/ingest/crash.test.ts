/**
 * Crash safety (issue 4 §2): the inbox worker runs as a child process on a large file, is killed with
 * SIGKILL in the middle of it, and restarted. Afterwards every wafer-step of the file is stored exactly
 * once, as after an uninterrupted run, and the file that was committed before the kill is not
 * duplicated.
 */
import fs from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { openDb, migrateLatest } from '../../../src/lib/server/db.ts';
import { addChambers, csv, HEADER, rows } from './helpers.ts';
import os from 'node:os';
import { killWhen, spawnTsx } from '../../helpers/crash.ts';

const ROWS = 24_000;
const OES = Array.from({ length: 120 }, (_, j) => 300 + j * 5); // 300–895 nm, every 5 nm
const WIDE = ['wafer_id', 'lot_id', 'chamber_id', 'recipe', 'step', 'processed_at', ...OES.map((w) => `oes_${w}`), 'pressure_mtorr'];

let dir: string;
let dbFile: string;
beforeAll(async () => {
	dir = fs.mkdtempSync(path.join(os.tmpdir(), 'lockstep-crash-'));
	dbFile = path.join(dir, 'lockstep.sqlite');
	const k = openDb({ client: 'better-sqlite3', filename: dbFile, connectionString: null });
	await migrateLatest(k);
	await addChambers(k, ['PM1', 'PM2']);
	await k.destroy();
	const inbox = path.join(dir, 'inbox');
	fs.mkdirSync(inbox);
	fs.writeFileSync(path.join(inbox, 'a-small.csv'), csv(HEADER, rows(30)));
	const t0 = Date.UTC(2026, 9, 1);
	const lines = [WIDE.join(',')];
	for (let i = 0; i < ROWS; i++) {
		const v = OES.map((_, j) => (1000 + ((i * 31 + j * 17) % 997) / 10).toFixed(1));
		lines.push([`X${i}`, `LX${i >> 5}`, i % 2 ? 'PM1' : 'PM2', 'WIDE', 'main', new Date(t0 + i * 60_000).toISOString(), ...v, '15.1'].join(','));
	}
	fs.writeFileSync(path.join(inbox, 'b-large.csv'), lines.join('\n') + '\n');
	// a-small must sort first: same mtime order is broken by name
	const past = new Date(Date.now() - 60_000);
	fs.utimesSync(path.join(inbox, 'a-small.csv'), past, past);
});
afterAll(() => fs.rmSync(dir, { recursive: true, force: true }));

const worker = () => spawnTsx(['jobs/ingest-inbox.ts', '--progress'], { LOCKSTEP_DATA_DIR: dir, LOCKSTEP_DB_FILE: dbFile, LOCKSTEP_INBOX_SETTLE_MS: '0' });

async function counts() {
	const k = openDb({ client: 'better-sqlite3', filename: dbFile, connectionString: null });
	try {
		const total = Number((await k('wafer_steps').count({ n: '*' }).first())?.n);
		const distinct = Number((await k.from(k('wafer_steps').distinct('wafer_id', 'recipe_step_id').as('d')).count({ n: '*' }).first())?.n);
		const large = Number((await k('wafer_steps').where('wafer_id', 'like', 'X%').count({ n: '*' }).first())?.n);
		const files = await k('ingest_files').orderBy('id').select('original_name', 'status', 'rows_accepted');
		return { total, distinct, large, files };
	} finally {
		await k.destroy();
	}
}

describe('inbox worker killed mid-file', () => {
	it('loses nothing and duplicates nothing after a restart', async () => {
		const w = worker();
		// Wait until the worker is well inside the large file, then kill it without warning.
		const sent = await killWhen(w, () => Number([...w.log().matchAll(/progress b-large\.csv processing (\d+)/g)].pop()?.[1] ?? 0) >= 2000, { pollMs: 5 });
		expect(sent, `worker ended before it could be killed:\n${w.log()}`).toBe(true);
		const killed = await w.exited;
		expect(killed.signal).toBe('SIGKILL');
		const mid = await counts();
		expect(mid.large).toBe(0); // the large file's transaction never committed
		expect(mid.total).toBe(30); // the small file, committed before the kill
		expect(fs.existsSync(path.join(dir, 'inbox', 'b-large.csv'))).toBe(true);

		const again = worker();
		const done = await again.exited;
		expect(done.code, again.log()).toBe(0);
		const after = await counts();
		expect(after.large).toBe(ROWS);
		expect(after.total).toBe(ROWS + 30);
		expect(after.distinct).toBe(after.total);
		expect(after.files).toEqual([
			{ original_name: 'a-small.csv', status: 'done', rows_accepted: 30 },
			{ original_name: 'b-large.csv', status: 'done', rows_accepted: ROWS }
		]);
		expect(fs.readdirSync(path.join(dir, 'inbox', 'processed')).sort()).toEqual([
			'a-small.csv',
			'a-small.csv.report.json',
			'b-large.csv',
			'b-large.csv.report.json'
		]);
	});
});
