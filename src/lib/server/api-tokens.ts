/**
 * API tokens for tool hosts and scripts. The token is shown once when created; the table keeps only
 * its SHA-256 (as for sessions, a copy of the database holds no usable token) and a short prefix so an
 * admin can tell tokens apart. Scopes: `ingest` may only post wafer summaries; `read` may only read.
 */
import type { Knex } from 'knex';
import { randomBytes } from 'node:crypto';
import { hashToken } from './auth.ts';
import { db } from './db.ts';
import { now } from './time.ts';

export const TOKEN_SCOPES = ['ingest', 'read'] as const;
export type TokenScope = (typeof TOKEN_SCOPES)[number];

export interface ApiToken {
	id: number;
	name: string;
	prefix: string;
	scope: TokenScope;
	createdBy: string | null;
	createdByName: string | null;
	createdAt: number;
	lastUsedAt: number | null;
	revokedAt: number | null;
}

/** Lockstep's token format: "lst_" and 32 random bytes in base64url (256 bits). */
const PREFIX = 'lst_';
const SHOWN_PREFIX = 12; // "lst_" + 8 characters
/** last_used_at is written at most this often per token, so reads do not turn every call into a write. */
const LAST_USED_RESOLUTION_MS = 60_000;

export function isTokenScope(x: unknown): x is TokenScope {
	return typeof x === 'string' && (TOKEN_SCOPES as readonly string[]).includes(x);
}

export function validateNewToken(input: { name: string; scope: string }): Record<string, string> {
	const errors: Record<string, string> = {};
	const name = input.name.trim();
	if (name.length < 1 || name.length > 120) errors.name = 'Name the token (1–120 characters), e.g. the tool host that uses it.';
	if (!isTokenScope(input.scope)) errors.scope = 'Scope must be ingest or read.';
	return errors;
}

export async function createApiToken(
	input: { name: string; scope: TokenScope; createdBy: string | null },
	k: Knex = db()
): Promise<{ token: string; id: number; prefix: string }> {
	const token = PREFIX + randomBytes(32).toString('base64url');
	const prefix = token.slice(0, SHOWN_PREFIX);
	const [row] = await k('api_tokens')
		.insert({
			name: input.name.trim(),
			token_hash: hashToken(token),
			prefix,
			scope: input.scope,
			created_by: input.createdBy,
			created_at: now()
		})
		.returning('id');
	return { token, id: Number(typeof row === 'object' ? row.id : row), prefix };
}

export async function listApiTokens(k: Knex = db()): Promise<ApiToken[]> {
	const rows = await k('api_tokens as t')
		.leftJoin('users as u', 'u.id', 't.created_by')
		.orderBy([{ column: 't.revoked_at', order: 'asc', nulls: 'first' }, { column: 't.created_at', order: 'desc' }])
		.select('t.*', 'u.username as created_by_name');
	return rows.map((r) => ({
		id: Number(r.id),
		name: r.name,
		prefix: r.prefix,
		scope: r.scope,
		createdBy: r.created_by,
		createdByName: r.created_by_name ?? null,
		createdAt: Number(r.created_at),
		lastUsedAt: r.last_used_at === null ? null : Number(r.last_used_at),
		revokedAt: r.revoked_at === null ? null : Number(r.revoked_at)
	}));
}

/** Revoke a token; returns false when it does not exist or was already revoked. */
export async function revokeApiToken(id: number, k: Knex = db()): Promise<boolean> {
	const n = await k('api_tokens').where({ id }).whereNull('revoked_at').update({ revoked_at: now() });
	return n > 0;
}

/**
 * The live token a bearer string names, recording its use; null for an unknown or revoked token.
 * Only the hash is looked up, so the comparison leaks nothing about stored tokens through timing.
 */
export async function verifyApiToken(token: string, k: Knex = db()): Promise<{ id: number; scope: TokenScope; name: string } | null> {
	if (!token.startsWith(PREFIX) || token.length > 100) return null;
	const r = await k('api_tokens').where({ token_hash: hashToken(token) }).whereNull('revoked_at').first('id', 'scope', 'name', 'last_used_at');
	if (!r || !isTokenScope(r.scope)) return null;
	const t = now();
	if (r.last_used_at === null || t - Number(r.last_used_at) >= LAST_USED_RESOLUTION_MS)
		await k('api_tokens').where({ id: r.id }).update({ last_used_at: t });
	return { id: Number(r.id), scope: r.scope, name: r.name };
}

/** The token in an `Authorization: Bearer …` header, or null when there is none. */
export function bearerToken(header: string | null): string | null {
	if (!header) return null;
	const m = /^Bearer\s+(\S+)\s*$/i.exec(header);
	return m ? m[1] : '';
}
