/**
 * The key that signs unsubscribe links: LOCKSTEP_SECRET, or a random 32-byte key generated on first
 * use and kept in `settings` (key `mail_signing_key`), so links keep working across restarts and
 * between the web and jobs processes. Never shown on any page.
 */
import type { Knex } from 'knex';
import { randomBytes } from 'node:crypto';
import { db } from '../db.ts';
import { now } from '../time.ts';
import { envSecret } from './env.ts';

const KEY = 'mail_signing_key';
// One database per process (the web server, the jobs, a test file): the key is read once.
let cached: string | null = null;

export async function signingSecret(k: Knex = db()): Promise<string> {
	const fromEnv = envSecret();
	if (fromEnv) return fromEnv;
	if (cached) return cached;
	// Insert-if-absent, then read back: two processes starting together end up with the same key.
	await k('settings')
		.insert({ key: KEY, value_json: JSON.stringify(randomBytes(32).toString('base64url')), updated_by: null, updated_at: now() })
		.onConflict('key')
		.ignore();
	const row = await k('settings').where({ key: KEY }).first('value_json');
	const secret = JSON.parse(row.value_json) as string;
	cached = secret;
	return secret;
}
