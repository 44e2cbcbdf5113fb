/**
 * Sign-in throttling: after 5 failed attempts within 15 minutes for one account, or 20 from one client
 * address, further attempts are refused until the window has passed. Counts come from the
 * sign_in_attempts table, so they hold across restarts and processes. (OWASP Authentication Cheat Sheet:
 * limit failed attempts per account and per source — common practice for the numbers.)
 */
import type { Knex } from 'knex';
import { db } from './db.ts';
import { now } from './time.ts';

function limit(name: string, fallback: number): number {
	const v = Number(process.env[name]);
	return Number.isInteger(v) && v > 0 ? v : fallback;
}

/**
 * The limits. LOCKSTEP_SIGNIN_ADDRESS_LIMIT raises the per-address one where many people share one
 * address (a proxy, a terminal server) — and for the e2e suite, whose every request comes from
 * 127.0.0.1; the per-account limit stays.
 */
export const THROTTLE = {
	windowMs: 15 * 60_000,
	perAccount: limit('LOCKSTEP_SIGNIN_ACCOUNT_LIMIT', 5),
	perAddress: limit('LOCKSTEP_SIGNIN_ADDRESS_LIMIT', 20)
} as const;

export interface ThrottleState {
	blocked: boolean;
	retryAfterMs: number;
}

async function failures(k: Knex, column: 'username' | 'client_address', value: string, since: number) {
	const rows = await k('sign_in_attempts')
		.where(column, value)
		.andWhere('at', '>', since)
		.andWhere('success', false)
		.orderBy('at', 'asc')
		.select('at');
	return rows.map((r) => Number(r.at));
}

export async function checkThrottle(username: string, address: string, k: Knex = db()): Promise<ThrottleState> {
	const t = now();
	const since = t - THROTTLE.windowMs;
	const acct = await failures(k, 'username', username, since);
	const addr = await failures(k, 'client_address', address, since);
	let until = 0;
	if (acct.length >= THROTTLE.perAccount) until = Math.max(until, acct[acct.length - THROTTLE.perAccount] + THROTTLE.windowMs);
	if (addr.length >= THROTTLE.perAddress) until = Math.max(until, addr[addr.length - THROTTLE.perAddress] + THROTTLE.windowMs);
	return { blocked: until > t, retryAfterMs: Math.max(0, until - t) };
}

export async function recordAttempt(username: string, address: string, success: boolean, k: Knex = db()) {
	await k('sign_in_attempts').insert({ username, client_address: address, at: now(), success });
	// A success clears the account's failures so a user who finally types it right starts afresh.
	if (success) await k('sign_in_attempts').where({ username, success: false }).delete();
}
