/**
 * Sign-in hardening (issue 13, items 2, 4, 7 and 8): the throttle holds under concurrent attempts, a
 * password change is throttled like a sign-in, an admin's reset lifts an account's lock and the 429 text
 * says so (and says when it cannot), and `next=` never leaves the site.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../../helpers/temp-db.ts';
import { createUser, getUserByUsername, setPassword } from '../../../src/lib/server/users.ts';
import { attemptSignIn, safeNext, verifyCurrentPassword } from '../../../src/lib/server/sign-in.ts';
import { THROTTLE } from '../../../src/lib/server/throttle.ts';

let env: Awaited<ReturnType<typeof useTempDb>>;
beforeAll(async () => {
	env = await useTempDb();
	for (const u of ['race', 'vera', 'otto', 'pia'])
		await createUser({ username: u, displayName: u, password: `${u}-password-1`, role: 'engineer' });
});
afterAll(() => env.cleanup());

describe('throttling under concurrency', () => {
	it(`30 wrong passwords sent at once: ${THROTTLE.perAccount} are checked, the rest get 429`, async () => {
		const results = await Promise.all(Array.from({ length: 30 }, () => attemptSignIn('race', 'wrong-password', '10.20.0.1')));
		const statuses = results.map((r) => (r.ok ? 200 : r.status));
		expect(statuses.filter((s) => s === 400)).toHaveLength(THROTTLE.perAccount);
		expect(statuses.filter((s) => s === 429)).toHaveLength(30 - THROTTLE.perAccount);
		// and the right password is refused too while the lock holds
		const right = await attemptSignIn('race', 'race-password-1', '10.20.0.2');
		expect(right.ok).toBe(false);
		expect(!right.ok && right.status).toBe(429);
	});

	it('concurrent attempts from one address across unknown names stop at the address limit', async () => {
		const results = await Promise.all(Array.from({ length: 40 }, (_, i) => attemptSignIn(`nobody${i}`, 'wrong-password', '10.30.0.1')));
		expect(results.filter((r) => !r.ok && r.status === 400)).toHaveLength(THROTTLE.perAddress);
		expect(results.filter((r) => !r.ok && r.status === 429)).toHaveLength(40 - THROTTLE.perAddress);
	});
});

describe('what the 429 says, and the admin reset', () => {
	it('an account lock names the reset, and a reset lifts it', async () => {
		for (let i = 0; i < THROTTLE.perAccount; i++) await attemptSignIn('vera', 'wrong-password', `10.40.0.${i}`);
		const locked = await attemptSignIn('vera', 'vera-password-1', '10.40.1.1');
		expect(!locked.ok && locked.status).toBe(429);
		expect(!locked.ok && locked.message).toMatch(/for this account.*reset your password: a reset lifts the lock/);
		const vera = await getUserByUsername('vera');
		await setPassword(vera!.id, 'vera-password-2');
		const after = await attemptSignIn('vera', 'vera-password-2', '10.40.1.1');
		expect(after.ok).toBe(true);
	});

	it('an address lock says an admin cannot lift it and names ADDRESS_HEADER', async () => {
		const r = await attemptSignIn('otto', 'otto-password-1', '10.30.0.1'); // the address locked above
		expect(!r.ok && r.status).toBe(429);
		expect(!r.ok && r.message).toMatch(/from your network address.*ADDRESS_HEADER/);
	});
});

describe('password change', () => {
	it('is throttled like a sign-in: after the limit even the right current password is refused', async () => {
		const statuses: number[] = [];
		for (let i = 0; i < 8; i++) {
			const r = await verifyCurrentPassword('pia', 'not-the-password', '10.50.0.1');
			statuses.push(r.ok ? 200 : r.status);
		}
		expect(statuses.slice(0, THROTTLE.perAccount)).toEqual(Array(THROTTLE.perAccount).fill(400));
		expect(statuses.slice(THROTTLE.perAccount)).toEqual(Array(8 - THROTTLE.perAccount).fill(429));
		const right = await verifyCurrentPassword('pia', 'pia-password-1', '10.50.0.2');
		expect(right.ok).toBe(false);
		// and the sign-in form is locked by the same failures
		const signIn = await attemptSignIn('pia', 'pia-password-1', '10.50.0.3');
		expect(!signIn.ok && signIn.status).toBe(429);
	});
});

describe('next= after sign-in', () => {
	it.each([
		['/alarms?state=open', '/alarms?state=open'],
		['/chambers/DE03-A#t2', '/chambers/DE03-A#t2'],
		['/\t/127.0.0.1:3201/pwned', '/'],
		['/%09/127.0.0.1:3201/pwned', '/%09/127.0.0.1:3201/pwned'],
		['//evil.example/x', '/'],
		['/\\evil.example', '/'],
		['/\n/evil.example', '/'],
		['https://evil.example/', '/'],
		['javascript:alert(1)', '/'],
		['', '/'],
		[null, '/']
	])('%j → %j', (raw, want) => {
		expect(safeNext(raw)).toBe(want);
	});
});
