/** A fresh, migrated SQLite file per test file; the process's `db()` points at it. */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import type { Knex } from 'knex';
import { closeDb, migrateLatest, openDb, setDb } from '../../src/lib/server/db.ts';

export async function useTempDb(): Promise<{ k: Knex; dir: string; cleanup: () => Promise<void> }> {
	const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'lockstep-test-'));
	const k = openDb({ client: 'better-sqlite3', filename: path.join(dir, 'test.sqlite'), connectionString: null });
	await migrateLatest(k);
	setDb(k);
	return {
		k,
		dir,
		async cleanup() {
			await closeDb();
			fs.rmSync(dir, { recursive: true, force: true });
		}
	};
}
