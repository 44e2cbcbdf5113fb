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
	/** which limit refused: the account's (an admin's reset lifts it) or the client address's (only time does) */
	scope: 'account' | 'address' | null;
}

/**
 * Record an attempt and decide, in that order: the attempt's row is inserted first (as a failure until
 * the password proves right), then the failures up to and including it are counted. Checking before
 * recording let 30 concurrent wrong passwords all pass the check (issue 13): now each attempt counts
 * every attempt recorded before it, whatever is still in flight. SQLite serialises the inserts, so the
 * row ids give the order; the insert and the count run in one transaction.
 *
 * A refused (blocked) attempt's row is removed again, so hammering a locked account does not extend
 * the lock; an allowed one stays a failure until `settleAttempt(…, true)`.
 */
export async function beginAttempt(username: string, address: string, k: Knex = db()): Promise<ThrottleState & { attemptId: number | null }> {
	const t = now();
	const since = t - THROTTLE.windowMs;
	return k.transaction(async (trx) => {
		const [row] = await trx('sign_in_attempts').insert({ username, client_address: address, at: t, success: false }).returning('id');
		const attemptId = Number(typeof row === 'object' ? row.id : row);
		const failuresBefore = async (column: 'username' | 'client_address', value: string) =>
			(
				await trx('sign_in_attempts')
					.where(column, value)
					.andWhere('at', '>', since)
					.andWhere('success', false)
					.andWhere('id', '<', attemptId)
					.orderBy('at', 'asc')
					.select('at')
			).map((r) => Number(r.at));
		const acct = await failuresBefore('username', username);
		const addr = await failuresBefore('client_address', address);
		const acctUntil = acct.length >= THROTTLE.perAccount ? acct[acct.length - THROTTLE.perAccount] + THROTTLE.windowMs : 0;
		const addrUntil = addr.length >= THROTTLE.perAddress ? addr[addr.length - THROTTLE.perAddress] + THROTTLE.windowMs : 0;
		const until = Math.max(acctUntil, addrUntil);
		const blocked = until > t;
		if (blocked) await trx('sign_in_attempts').where({ id: attemptId }).delete();
		const scope = !blocked ? null : addrUntil > t ? 'address' : 'account';
		return { blocked, retryAfterMs: Math.max(0, until - t), scope, attemptId: blocked ? null : attemptId };
	});
}

/** The attempt's outcome: a success clears the account's failures, so a user who finally types it right starts afresh. */
export async function settleAttempt(attemptId: number, username: string, success: boolean, k: Knex = db()): Promise<void> {
	if (!success) return; // already recorded as a failure
	await k.transaction(async (trx) => {
		await trx('sign_in_attempts').where({ id: attemptId }).update({ success: true });
		await trx('sign_in_attempts').where({ username, success: false }).delete();
	});
}

/** An admin's password reset lifts the account's lock (its failures are forgotten). */
export async function clearAccountFailures(username: string, k: Knex = db()): Promise<void> {
	await k('sign_in_attempts').where({ username, success: false }).delete();
}

/**
 * The refusal people read, saying what is true: the wait, and — for an account's lock — that an admin's
 * password reset lifts it; an address's lock (many failures from one address, e.g. behind a shared
 * proxy) only time lifts.
 */
export function throttledMessage(state: Pick<ThrottleState, 'retryAfterMs' | 'scope'>, what = 'sign-ins'): string {
	const minutes = Math.max(1, Math.ceil(state.retryAfterMs / 60_000));
	const wait = `Try again in ${minutes} minute${minutes === 1 ? '' : 's'}`;
	if (state.scope === 'address')
		return `Too many failed ${what} from your network address. ${wait}; an admin cannot lift this sooner (behind a shared proxy, ask them to set ADDRESS_HEADER).`;
	return `Too many failed ${what} for this account. ${wait}, or ask an admin to reset your password: a reset lifts the lock.`;
}
