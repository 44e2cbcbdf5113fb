/**
 * The one Knex instance of a process. Server code imports `db()`; tests and jobs may open their own
 * with `openDb()` on another file.
 */
import knexFactory, { type Knex } from 'knex';
import { knexConfig } from './db-config.ts';
import type { DbConfig } from './config.ts';
import { config } from './config.ts';

let instance: Knex | null = null;

export function openDb(dbConfig: DbConfig = config.db): Knex {
	return knexFactory(knexConfig(dbConfig));
}

export function db(): Knex {
	instance ??= openDb();
	return instance;
}

/** Use a given instance as the process's one (tests, jobs). */
export function setDb(k: Knex | null): void {
	instance = k;
}

export async function closeDb(): Promise<void> {
	if (instance) {
		const k = instance;
		instance = null;
		await k.destroy();
	}
}

export async function migrateLatest(k: Knex = db()): Promise<void> {
	await k.migrate.latest();
}
