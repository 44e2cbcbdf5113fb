/** The sign-in use case: throttle, verify, open a session. Kept out of the route so tests can call it. */
import { checkThrottle, recordAttempt } from './throttle.ts';
import { getUserByUsername, verifyPassword } from './users.ts';

export const GENERIC_FAILURE = 'That user name and password do not match an active account.';

export type SignInResult =
	| { ok: true; userId: string }
	| { ok: false; status: 400 | 429; message: string; retryAfterMs?: number };

export async function attemptSignIn(usernameRaw: string, password: string, address: string): Promise<SignInResult> {
	const username = usernameRaw.trim().toLowerCase();
	if (!username || !password) return { ok: false, status: 400, message: 'Enter your user name and password.' };
	if (username.length > 64 || password.length > 256) return { ok: false, status: 400, message: GENERIC_FAILURE };
	const throttle = await checkThrottle(username, address);
	if (throttle.blocked) {
		const minutes = Math.ceil(throttle.retryAfterMs / 60_000);
		return {
			ok: false,
			status: 429,
			message: `Too many failed sign-ins. Try again in ${minutes} minute${minutes === 1 ? '' : 's'}, or ask an admin to reset your password.`,
			retryAfterMs: throttle.retryAfterMs
		};
	}
	const user = await getUserByUsername(username);
	const ok = await verifyPassword(user && !user.disabled ? user.passwordHash : null, password);
	await recordAttempt(username, address, ok);
	if (!ok || !user) return { ok: false, status: 400, message: GENERIC_FAILURE };
	return { ok: true, userId: user.id };
}
