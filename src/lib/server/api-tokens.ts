/**
 * API tokens. The token is shown once when created; the table keeps only its SHA-256 (as for sessions,
 * a copy of the database holds no usable token) and a short prefix so people can tell tokens apart.
 *
 * Two kinds:
 * - a **service token** (no owner) is made by an admin for a tool host or a script: it may read, send
 *   wafer summaries and, with `register`, add the chambers those files name;
 * - a **personal token** belongs to one person and acts as that person, with their role as it is at
 *   each request (a disabled account's tokens stop working; a demoted one's lose rights): what it does
 *   is recorded under their name. Its scopes narrow what it may do further.
 *
 * Scopes: `read` (GET the API), `write` (change state through the API: personal tokens only),
 * `ingest` (POST /api/ingest), `register` (with ingest: unknown chambers are registered into the
 * unassigned tool instead of being refused; granted by admins only).
 */
import type { Knex } from 'knex';
import { randomBytes } from 'node:crypto';
import { hashToken } from './auth.ts';
import { db } from './db.ts';
import { hasRole, isRole, type Role } from './roles.ts';
import { now } from './time.ts';

export const TOKEN_SCOPES = ['read', 'write', 'ingest', 'register'] as const;
export type TokenScope = (typeof TOKEN_SCOPES)[number];
export const SERVICE_SCOPES: readonly TokenScope[] = ['read', 'ingest', 'register'];

export const SCOPE_LABELS: Record<TokenScope, string> = {
	read: 'read — GET any API route the holder may read',
	write: 'write — acknowledge, approve, start qualifications and matching, edit the fab structure (as the person)',
	ingest: 'ingest — send wafer-summary files',
	register: 'register — with ingest, add unknown chambers to the unassigned tool'
};

/** What a verified bearer token is, as hooks.server.ts puts it on `locals.apiToken`. */
export interface TokenIdentity {
	id: number;
	name: string;
	scopes: TokenScope[];
	/** the owner of a personal token (it acts as them); null for a service token */
	owner: { id: string; username: string; displayName: string; role: Role; timeZone: string; email: string | null } | null;
}

export interface ApiToken {
	id: number;
	name: string;
	prefix: string;
	scopes: TokenScope[];
	/** the person a personal token acts as; null for a service token */
	ownerName: string | null;
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

/** Scopes as stored (comma-separated), unknown words dropped, in the canonical order. */
export function parseScopes(text: string | null | undefined): TokenScope[] {
	const words = new Set((text ?? '').split(/[\s,]+/).filter(Boolean));
	return TOKEN_SCOPES.filter((s) => words.has(s));
}

export interface NewToken {
	name: string;
	scopes: string[];
}

/**
 * Check a new token's name and scopes. `ownerRole` is the role of the person a personal token will act
 * as; null for a service token.
 */
export function validateNewToken(input: NewToken, ownerRole: Role | null): Record<string, string> {
	const errors: Record<string, string> = {};
	const name = input.name.trim();
	if (name.length < 1 || name.length > 120) errors.name = 'Name the token (1–120 characters), e.g. the tool host or script that uses it.';
	const unknown = input.scopes.filter((s) => !isTokenScope(s));
	const scopes = input.scopes.filter(isTokenScope);
	const allowed = ownerRole === null ? SERVICE_SCOPES : TOKEN_SCOPES;
	if (unknown.length) errors.scope = `Unknown scope ${unknown.map((s) => `“${s.slice(0, 40)}”`).join(', ')}: choose from ${allowed.join(', ')}.`;
	else if (scopes.length === 0) errors.scope = `Choose at least one scope (${allowed.join(', ')}).`;
	else if (ownerRole === null && scopes.includes('write'))
		errors.scope = 'A service token cannot write: it acts as nobody. Give the script its own account and a personal token.';
	else if (scopes.includes('register') && !scopes.includes('ingest')) errors.scope = 'register only works together with ingest.';
	else if (scopes.includes('register') && ownerRole !== null && ownerRole !== 'admin')
		errors.scope = 'Only an admin’s token may register chambers (the fab structure is theirs to change).';
	else if (scopes.includes('ingest') && ownerRole !== null && !hasRole(ownerRole, 'engineer'))
		errors.scope = 'A viewer cannot send files, so a viewer’s token cannot ingest.';
	else if (scopes.includes('write') && ownerRole === 'viewer') errors.scope = 'A viewer changes nothing, so a viewer’s token cannot write.';
	return errors;
}

export async function createApiToken(
	input: { name: string; scopes: TokenScope[]; createdBy: string | null; ownerId?: string | null },
	k: Knex = db()
): Promise<{ token: string; id: number; prefix: string }> {
	const token = PREFIX + randomBytes(32).toString('base64url');
	const prefix = token.slice(0, SHOWN_PREFIX);
	const [row] = await k('api_tokens')
		.insert({
			name: input.name.trim(),
			token_hash: hashToken(token),
			prefix,
			scopes: parseScopes(input.scopes.join(',')).join(','),
			user_id: input.ownerId ?? null,
			created_by: input.createdBy,
			created_at: now()
		})
		.returning('id');
	return { token, id: Number(typeof row === 'object' ? row.id : row), prefix };
}

/** Tokens, newest live first. `filter.ownerId`: one person's personal tokens; `service`: service tokens only. */
export async function listApiTokens(filter: { ownerId?: string; service?: boolean } = {}, k: Knex = db()): Promise<ApiToken[]> {
	const q = k('api_tokens as t')
		.leftJoin('users as u', 'u.id', 't.created_by')
		.leftJoin('users as o', 'o.id', 't.user_id')
		.orderBy([{ column: 't.revoked_at', order: 'asc', nulls: 'first' }, { column: 't.created_at', order: 'desc' }, { column: 't.id', order: 'desc' }])
		.select('t.*', 'u.username as created_by_name', 'o.username as owner_name');
	if (filter.ownerId !== undefined) q.where('t.user_id', filter.ownerId);
	if (filter.service) q.whereNull('t.user_id');
	const rows = await q;
	return rows.map((r) => ({
		id: Number(r.id),
		name: r.name,
		prefix: r.prefix,
		scopes: parseScopes(r.scopes),
		ownerName: r.owner_name ?? null,
		createdBy: r.created_by,
		createdByName: r.created_by_name ?? null,
		createdAt: Number(r.created_at),
		lastUsedAt: r.last_used_at === null ? null : Number(r.last_used_at),
		revokedAt: r.revoked_at === null ? null : Number(r.revoked_at)
	}));
}

/**
 * Revoke a token; returns false when it does not exist, was already revoked, or is not within `only`:
 * `{ ownerId }` limits it to one person's tokens (a person revoking their own), `{ service: true }` to
 * service tokens.
 */
export async function revokeApiToken(id: number, only: { ownerId?: string; service?: boolean } = {}, k: Knex = db()): Promise<boolean> {
	const q = k('api_tokens').where({ id }).whereNull('revoked_at');
	if (only.ownerId !== undefined) q.andWhere('user_id', only.ownerId);
	if (only.service) q.whereNull('user_id');
	return (await q.update({ revoked_at: now() })) > 0;
}

/**
 * The live token a bearer string names, recording its use; null for an unknown or revoked token, or a
 * personal token whose owner is disabled. Only the hash is looked up, so the comparison leaks nothing
 * about stored tokens through timing.
 */
export async function verifyApiToken(token: string, k: Knex = db()): Promise<TokenIdentity | null> {
	if (!token.startsWith(PREFIX) || token.length > 100) return null;
	const r = await k('api_tokens as t')
		.leftJoin('users as o', 'o.id', 't.user_id')
		.where('t.token_hash', hashToken(token))
		.whereNull('t.revoked_at')
		.first('t.id', 't.scopes', 't.name', 't.last_used_at', 't.user_id', 'o.username', 'o.display_name', 'o.role', 'o.time_zone', 'o.email', 'o.disabled_at');
	if (!r) return null;
	let owner: TokenIdentity['owner'] = null;
	if (r.user_id !== null) {
		if (r.username == null || r.disabled_at !== null || !isRole(r.role)) return null;
		owner = { id: r.user_id, username: r.username, displayName: r.display_name, role: r.role, timeZone: r.time_zone, email: r.email ?? null };
	}
	const scopes = parseScopes(r.scopes);
	if (scopes.length === 0) return null;
	const t = now();
	if (r.last_used_at === null || t - Number(r.last_used_at) >= LAST_USED_RESOLUTION_MS)
		await k('api_tokens').where({ id: r.id }).update({ last_used_at: t });
	return { id: Number(r.id), name: r.name, scopes, owner };
}

/** Whether files sent with this token register the unknown chambers they name. */
export function tokenRegistersChambers(t: Pick<TokenIdentity, 'scopes' | 'owner'>): boolean {
	return t.scopes.includes('register') && t.scopes.includes('ingest') && (t.owner === null || t.owner.role === 'admin');
}

/** The token in an `Authorization: Bearer …` header, or null when there is none. */
export function bearerToken(header: string | null): string | null {
	if (!header) return null;
	const m = /^Bearer\s+(\S+)\s*$/i.exec(header);
	return m ? m[1] : '';
}
