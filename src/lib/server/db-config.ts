import fs from 'node:fs';
import path from 'node:path';
import type { Knex } from 'knex';
import { migrationSource } from '../../../migrations/index.ts';
import { config as appConfig, type DbConfig } from './config.ts';

/**
 * Knex configuration for the embedded SQLite default or PostgreSQL. SQLite gets foreign keys and WAL on
 * every new connection; PostgreSQL's int8 (our epoch-millisecond columns) is parsed to a JS number.
 */
export function knexConfig(db: DbConfig = appConfig.db): Knex.Config {
	const common = { migrations: { migrationSource, tableName: 'knex_migrations' } };
	if (db.client === 'pg') {
		if (!db.connectionString) throw new Error('LOCKSTEP_DB_CLIENT=pg needs DATABASE_URL');
		return { ...common, client: 'pg', connection: db.connectionString, pool: { min: 0, max: 10 } };
	}
	fs.mkdirSync(path.dirname(db.filename), { recursive: true });
	return {
		...common,
		client: 'better-sqlite3',
		connection: { filename: db.filename },
		useNullAsDefault: true,
		pool: {
			min: 1,
			max: 1,
			afterCreate(conn: { pragma: (s: string) => unknown }, done: (err: Error | null, conn: unknown) => void) {
				conn.pragma('journal_mode = WAL');
				conn.pragma('foreign_keys = ON');
				conn.pragma('synchronous = NORMAL');
				conn.pragma('busy_timeout = 5000');
				done(null, conn);
			}
		}
	};
}
