/**
 * Runtime configuration from environment variables. Read here only, so every entry point (web server,
 * jobs, seeds, tests) sees the same settings. Plain `process.env` rather than `$env`, because jobs/ and
 * seeds/ run outside Vite.
 */
import path from 'node:path';

export interface DbConfig {
	client: 'better-sqlite3' | 'pg';
	/** SQLite file path (better-sqlite3) */
	filename: string;
	/** PostgreSQL connection string (pg) */
	connectionString: string | null;
}

export interface AppConfig {
	dataDir: string;
	db: DbConfig;
	origin: string | null;
	inboxDir: string;
	uploadLimitBytes: number;
	ingestCron: string;
	futureToleranceMs: number;
	/** the scheduling niceness of the jobs' processes (0 = same as the web server) */
	jobsNice: number;
	isProduction: boolean;
	smtp: { host: string; port: number; secure: boolean; user: string | null; pass: string | null; from: string };
}

function int(name: string, fallback: number): number {
	const raw = process.env[name];
	if (raw === undefined || raw === '') return fallback;
	const v = Number(raw);
	if (!Number.isFinite(v)) throw new Error(`${name} must be a number, got "${raw}"`);
	return v;
}

export function loadConfig(env: NodeJS.ProcessEnv = process.env): AppConfig {
	const dataDir = path.resolve(env.LOCKSTEP_DATA_DIR ?? './data');
	const client = (env.LOCKSTEP_DB_CLIENT ?? 'better-sqlite3') as DbConfig['client'];
	if (client !== 'better-sqlite3' && client !== 'pg') {
		throw new Error(`LOCKSTEP_DB_CLIENT must be better-sqlite3 or pg, got "${client}"`);
	}
	return {
		dataDir,
		db: {
			client,
			filename: path.resolve(env.LOCKSTEP_DB_FILE ?? path.join(dataDir, 'lockstep.sqlite')),
			connectionString: env.DATABASE_URL ?? null
		},
		origin: env.ORIGIN ?? null,
		inboxDir: path.resolve(env.LOCKSTEP_INBOX_DIR ?? path.join(dataDir, 'inbox')),
		uploadLimitBytes: int('LOCKSTEP_UPLOAD_LIMIT_MB', 200) * 1024 * 1024,
		ingestCron: env.LOCKSTEP_INGEST_CRON ?? '* * * * *',
		futureToleranceMs: int('LOCKSTEP_FUTURE_TOLERANCE_MIN', 10) * 60_000,
		jobsNice: Math.max(0, Math.min(19, Math.round(int('LOCKSTEP_JOBS_NICE', 10)))),
		isProduction: env.NODE_ENV === 'production',
		smtp: {
			host: env.SMTP_HOST ?? '127.0.0.1',
			port: int('SMTP_PORT', 2525),
			secure: env.SMTP_SECURE === 'true',
			user: env.SMTP_USER ?? null,
			pass: env.SMTP_PASS ?? null,
			from: env.SMTP_FROM ?? 'Lockstep <lockstep@localhost>'
		}
	};
}

export const config = loadConfig();
