/**
 * Personal and service API tokens: what may be created, what a bearer string resolves to (a personal
 * token acts as its owner with their role *now*), revocation limited to one's own, and the route policy
 * that hooks.server.ts applies to each kind.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../../helpers/temp-db.ts';
import { createUser, getUserByUsername, setDisabled, setRole } from '../../../src/lib/server/users.ts';
import { createApiToken, listApiTokens, parseScopes, revokeApiToken, tokenRegistersChambers, validateNewToken, verifyApiToken } from '../../../src/lib/server/api-tokens.ts';
import { decide } from '../../../src/lib/server/route-policy.ts';

let env: Awaited<ReturnType<typeof useTempDb>>;
let eng = '';
let adm = '';
beforeAll(async () => {
	env = await useTempDb();
	eng = (await createUser({ username: 'noor', displayName: 'Noor', password: 'noor-password-1', role: 'engineer' })).id;
	adm = (await createUser({ username: 'ines', displayName: 'Ines', password: 'ines-password-1', role: 'admin' })).id;
});
afterAll(() => env.cleanup());

const url = (p: string) => new URL(`http://x${p}`);

describe('which tokens may be made', () => {
	it('refuses what the holder could not do, and says why', () => {
		expect(validateNewToken({ name: 'nightly', scopes: ['read', 'write'] }, 'engineer')).toEqual({});
		expect(validateNewToken({ name: ' ', scopes: ['read'] }, 'engineer').name).toMatch(/1–120/);
		expect(validateNewToken({ name: 'x', scopes: [] }, 'engineer').scope).toMatch(/at least one/);
		expect(validateNewToken({ name: 'x', scopes: ['read', 'root'] }, 'engineer').scope).toMatch(/Unknown scope “root”/);
		expect(validateNewToken({ name: 'x', scopes: ['ingest', 'register'] }, 'engineer').scope).toMatch(/Only an admin/);
		expect(validateNewToken({ name: 'x', scopes: ['ingest', 'register'] }, 'admin')).toEqual({});
		expect(validateNewToken({ name: 'x', scopes: ['register'] }, 'admin').scope).toMatch(/together with ingest/);
		expect(validateNewToken({ name: 'x', scopes: ['write'] }, 'viewer').scope).toMatch(/viewer/);
		expect(validateNewToken({ name: 'x', scopes: ['ingest'] }, 'viewer').scope).toMatch(/viewer/);
		expect(validateNewToken({ name: 'host', scopes: ['write'] }, null).scope).toMatch(/service token cannot write/);
		expect(validateNewToken({ name: 'host', scopes: ['ingest', 'register'] }, null)).toEqual({});
	});
	it('stores scopes in one order and drops unknown words', () => {
		expect(parseScopes('register,ingest, bogus read')).toEqual(['read', 'ingest', 'register']);
		expect(parseScopes(null)).toEqual([]);
	});
});

describe('what a bearer string resolves to', () => {
	it('a personal token is its owner, with the role they have at each request; only its hash is kept', async () => {
		const t = await createApiToken({ name: 'notebook', scopes: ['read', 'write'], createdBy: eng, ownerId: eng });
		const row = await env.k('api_tokens').where({ id: t.id }).first();
		expect(row.token_hash).not.toContain(t.token.slice(4));
		expect(row.scopes).toBe('read,write');
		expect(await verifyApiToken(t.token)).toMatchObject({ id: t.id, scopes: ['read', 'write'], owner: { id: eng, username: 'noor', role: 'engineer' } });
		await setRole(eng, 'viewer');
		expect((await verifyApiToken(t.token))?.owner?.role).toBe('viewer');
		await setRole(eng, 'engineer');
		await setDisabled(eng, true);
		expect(await verifyApiToken(t.token)).toBeNull();
		await setDisabled(eng, false);
		expect(await verifyApiToken(t.token)).not.toBeNull();
		expect(await verifyApiToken(t.token.slice(0, -1) + (t.token.endsWith('A') ? 'B' : 'A'))).toBeNull();
	});

	it('a service token acts as nobody; register works only with ingest and, for a person, only an admin', async () => {
		const s = await createApiToken({ name: 'px-host', scopes: ['ingest', 'register'], createdBy: adm });
		const v = await verifyApiToken(s.token);
		expect(v).toMatchObject({ owner: null, scopes: ['ingest', 'register'] });
		expect(tokenRegistersChambers(v!)).toBe(true);
		expect(tokenRegistersChambers({ scopes: ['ingest'], owner: null })).toBe(false);
		const me = await getUserByUsername('noor');
		expect(tokenRegistersChambers({ scopes: ['ingest', 'register'], owner: { ...me!, email: null } })).toBe(false);
	});
});

describe('revoking', () => {
	it('a person revokes only their own; an admin page revokes service tokens or any', async () => {
		const mine = await createApiToken({ name: 'a', scopes: ['read'], createdBy: eng, ownerId: eng });
		const theirs = await createApiToken({ name: 'b', scopes: ['read'], createdBy: adm, ownerId: adm });
		expect(await revokeApiToken(theirs.id, { ownerId: eng })).toBe(false);
		expect(await revokeApiToken(mine.id, { service: true })).toBe(false);
		expect(await revokeApiToken(mine.id, { ownerId: eng })).toBe(true);
		expect(await revokeApiToken(mine.id, { ownerId: eng })).toBe(false);
		expect(await verifyApiToken(mine.token)).toBeNull();
		expect((await listApiTokens({ ownerId: eng })).map((t) => [t.name, t.revokedAt !== null])).toContainEqual(['a', true]);
		expect((await listApiTokens({ service: true })).every((t) => t.ownerName === null)).toBe(true);
	});
});

describe('route policy for tokens', () => {
	const personal = (role: 'viewer' | 'engineer' | 'admin', ...scopes: ('read' | 'write' | 'ingest' | 'register')[]) => ({ scopes, owner: { role } });
	const service = (...scopes: ('read' | 'ingest' | 'register')[]) => ({ scopes, owner: null });

	it('a personal token acts with its owner’s role, within its scopes', () => {
		expect(decide('/api/chambers', 'POST', url('/api/chambers'), null, false, personal('admin', 'read', 'write'))).toEqual({ allow: true });
		expect(decide('/api/chambers', 'POST', url('/api/chambers'), null, false, personal('engineer', 'read', 'write'))).toMatchObject({ allow: false, status: 403, reason: expect.stringContaining('admin role') });
		expect(decide('/api/chambers', 'POST', url('/api/chambers'), null, false, personal('admin', 'read'))).toMatchObject({ allow: false, status: 403, reason: expect.stringContaining('"write" scope') });
		expect(decide('/api/ingest', 'POST', url('/api/ingest'), null, false, personal('engineer', 'ingest'))).toEqual({ allow: true });
		expect(decide('/api/ingest', 'POST', url('/api/ingest'), null, false, personal('engineer', 'read', 'write'))).toMatchObject({ allow: false, reason: expect.stringContaining('"ingest" scope') });
		expect(decide('/api/ingest', 'POST', url('/api/ingest'), null, false, personal('viewer', 'ingest'))).toMatchObject({ allow: false, status: 403 });
		// Routes without a token entry are open to personal tokens at the owner's role.
		expect(decide('/api/uploads', 'GET', url('/api/uploads'), null, false, personal('engineer', 'read'))).toEqual({ allow: true });
		expect(decide('/api/uploads', 'GET', url('/api/uploads'), null, false, personal('viewer', 'read'))).toMatchObject({ allow: false, status: 403 });
	});

	it('a service token reads where its scope is named, ingests with ingest, and changes nothing else', () => {
		expect(decide('/api/chambers', 'GET', url('/api/chambers'), null, false, service('ingest'))).toEqual({ allow: true });
		expect(decide('/api/chambers', 'GET', url('/api/chambers'), null, false, service('read'))).toEqual({ allow: true });
		expect(decide('/api/chambers', 'POST', url('/api/chambers'), null, false, service('ingest', 'register', 'read'))).toMatchObject({ allow: false, status: 403 });
		expect(decide('/api/ingest', 'POST', url('/api/ingest'), null, false, service('ingest', 'register'))).toEqual({ allow: true });
		expect(decide('/api/ingest', 'POST', url('/api/ingest'), null, false, service('read'))).toMatchObject({ allow: false, reason: 'A read token can only read.' });
		expect(decide('/api/fleet', 'GET', url('/api/fleet'), null, false, service('ingest'))).toMatchObject({ allow: false, reason: expect.stringContaining('scope "ingest"') });
		expect(decide('/api/uploads', 'GET', url('/api/uploads'), null, false, service('read'))).toMatchObject({ allow: false, status: 403 });
		expect(decide('/api/openapi.json', 'GET', url('/api/openapi.json'), null, false, null)).toEqual({ allow: true });
	});
});
