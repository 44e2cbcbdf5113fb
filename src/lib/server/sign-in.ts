/** The sign-in use case: throttle, verify, open a session. Kept out of the route so tests can call it. */
import { beginAttempt, settleAttempt, throttledMessage } from './throttle.ts';
import { getUserByUsername, verifyPassword } from './users.ts';

export const GENERIC_FAILURE = 'That user name and password do not match an active account.';

export type SignInResult =
	| { ok: true; userId: string }
	| { ok: false; status: 400 | 429; message: string; retryAfterMs?: number };

export async function attemptSignIn(usernameRaw: string, password: string, address: string): Promise<SignInResult> {
	const username = usernameRaw.trim().toLowerCase();
	if (!username || !password) return { ok: false, status: 400, message: 'Enter your user name and password.' };
	if (username.length > 64 || password.length > 256) return { ok: false, status: 400, message: GENERIC_FAILURE };
	// Recorded before it is checked, atomically (throttle.ts): concurrent attempts cannot all pass.
	const attempt = await beginAttempt(username, address);
	if (attempt.blocked || attempt.attemptId === null)
		return { ok: false, status: 429, message: throttledMessage(attempt), retryAfterMs: attempt.retryAfterMs };
	const user = await getUserByUsername(username);
	const ok = await verifyPassword(user && !user.disabled ? user.passwordHash : null, password);
	await settleAttempt(attempt.attemptId, username, ok && !!user);
	if (!ok || !user) return { ok: false, status: 400, message: GENERIC_FAILURE };
	return { ok: true, userId: user.id };
}

/**
 * Check the current password of a signed-in user (password change), throttled like a sign-in: the
 * same per-account and per-address limits and the same table, so a stolen session cannot guess the
 * password faster than the sign-in form allows (issue 13).
 */
export async function verifyCurrentPassword(username: string, password: string, address: string): Promise<{ ok: true } | { ok: false; status: 400 | 429; message: string }> {
	if (!password || password.length > 256) return { ok: false, status: 400, message: 'The current password is not right.' };
	const attempt = await beginAttempt(username, address);
	if (attempt.blocked || attempt.attemptId === null) return { ok: false, status: 429, message: throttledMessage(attempt, 'password checks') };
	const user = await getUserByUsername(username);
	const ok = await verifyPassword(user && !user.disabled ? user.passwordHash : null, password);
	await settleAttempt(attempt.attemptId, username, ok && !!user);
	return ok ? { ok: true } : { ok: false, status: 400, message: 'The current password is not right.' };
}

/**
 * Where to go after sign-in: only a path on this site. `next=` comes from the query string, so it is
 * resolved the way a browser would resolve it — browsers drop tabs and line breaks from a URL and treat
 * a backslash as a slash, so `/\t/evil.example` or `/\\evil.example` would leave the site — and
 * anything that does not stay on this origin, or holds a control character or a backslash, goes to `/`.
 */
export function safeNext(raw: string | null | undefined): string {
	if (!raw || raw.length > 2048 || !raw.startsWith('/') || /[\u0000-\u001f\u007f\\]/.test(raw)) return '/';
	const probe = 'http://lockstep.invalid';
	let u: URL;
	try {
		u = new URL(raw, probe);
	} catch {
		return '/';
	}
	if (u.origin !== probe || u.pathname.startsWith('//')) return '/';
	return u.pathname + u.search + u.hash;
}
