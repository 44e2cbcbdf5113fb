import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../helpers/temp-db.ts';
import { createUser, getUserByUsername, verifyPassword } from '../../src/lib/server/users.ts';
import { attemptSignIn, GENERIC_FAILURE } from '../../src/lib/server/sign-in.ts';
import { THROTTLE } from '../../src/lib/server/throttle.ts';
import { KnexSessionAdapter, hashToken } from '../../src/lib/server/auth.ts';
import { db } from '../../src/lib/server/db.ts';

let env: Awaited<ReturnType<typeof useTempDb>>;
beforeAll(async () => {
	env = await useTempDb();
	await createUser({ username: 'mira', displayName: 'Mira', password: 'correct horse battery', role: 'engineer' });
});
afterAll(() => env.cleanup());

describe('passwords', () => {
	it('stores an argon2id hash, never the password', async () => {
		const u = await getUserByUsername('mira');
		expect(u!.passwordHash.startsWith('$argon2id$')).toBe(true);
		expect(u!.passwordHash).not.toContain('correct horse');
		expect(await verifyPassword(u!.passwordHash, 'correct horse battery')).toBe(true);
		expect(await verifyPassword(u!.passwordHash, 'wrong')).toBe(false);
	});
});

describe('sign-in', () => {
	it('accepts the right password', async () => {
		const r = await attemptSignIn('Mira', 'correct horse battery', '10.0.0.1');
		expect(r.ok).toBe(true);
	});
	it('answers a wrong password and an unknown user with the same message', async () => {
		const a = await attemptSignIn('mira', 'nope-nope-nope', '10.0.0.2');
		const b = await attemptSignIn('nobody', 'nope-nope-nope', '10.0.0.2');
		expect(a).toEqual({ ok: false, status: 400, message: GENERIC_FAILURE });
		expect(b).toEqual({ ok: false, status: 400, message: GENERIC_FAILURE });
	});
	it(`throttles an account after ${THROTTLE.perAccount} failures, even with the right password`, async () => {
		await createUser({ username: 'tess', displayName: 'Tess', password: 'tess-password-1', role: 'viewer' });
		for (let i = 0; i < THROTTLE.perAccount; i++) {
			const r = await attemptSignIn('tess', 'bad-password', `10.1.0.${i}`);
			expect(r.ok).toBe(false);
		}
		const blocked = await attemptSignIn('tess', 'tess-password-1', '10.1.0.99');
		expect(blocked.ok).toBe(false);
		if (!blocked.ok) {
			expect(blocked.status).toBe(429);
			expect(blocked.retryAfterMs).toBeGreaterThan(0);
		}
	});
	it(`throttles a client address after ${THROTTLE.perAddress} failures across accounts`, async () => {
		for (let i = 0; i < THROTTLE.perAddress; i++) await attemptSignIn(`ghost${i}`, 'x-password-x', '10.9.9.9');
		const r = await attemptSignIn('mira', 'correct horse battery', '10.9.9.9');
		expect(r.ok).toBe(false);
		const elsewhere = await attemptSignIn('mira', 'correct horse battery', '10.9.9.10');
		expect(elsewhere.ok).toBe(true);
	});
});

describe('session storage', () => {
	it('keeps only the SHA-256 of the session token', async () => {
		const adapter = new KnexSessionAdapter(db);
		const u = await getUserByUsername('mira');
		const token = 'token-abc-123';
		await adapter.setSession({ id: token, userId: u!.id, expiresAt: new Date(Date.now() + 60_000), attributes: {} });
		const rows = await env.k('sessions').select('id');
		expect(rows.map((r) => r.id)).toContain(hashToken(token));
		expect(rows.map((r) => r.id)).not.toContain(token);
		const [s, user] = await adapter.getSessionAndUser(token);
		expect(s?.userId).toBe(u!.id);
		expect(user?.attributes.username).toBe('mira');
		await adapter.deleteSession(token);
		expect((await adapter.getSessionAndUser(token))[0]).toBeNull();
	});
});

describe('audit trail', () => {
	it('refuses to update or delete alarm actions', async () => {
		const t = Date.now();
		const [area] = await env.k('areas').insert({ code: 'A', name: 'A' }).returning('id');
		const [tool] = await env.k('tools').insert({ code: 'T', name: 'T', area_id: area.id ?? area }).returning('id');
		const [ch] = await env.k('chambers').insert({ code: 'C', name: 'C', tool_id: tool.id ?? tool, created_at: t }).returning('id');
		const [rc] = await env.k('recipes').insert({ code: 'R', name: 'R' }).returning('id');
		const [st] = await env.k('recipe_steps').insert({ recipe_id: rc.id ?? rc, name: 's1' }).returning('id');
		const [al] = await env.k('alarms')
			.insert({ chamber_id: ch.id ?? ch, recipe_step_id: st.id ?? st, rule: 'single', severity: 'alarm', state: 'open', opened_at: t, last_seen_at: t })
			.returning('id');
		await env.k('alarm_actions').insert({ alarm_id: al.id ?? al, at: t, action: 'opened', to_state: 'open' });
		await expect(env.k('alarm_actions').update({ comment: 'edited' })).rejects.toThrow(/append-only/);
		await expect(env.k('alarm_actions').delete()).rejects.toThrow(/append-only/);
	});
});
