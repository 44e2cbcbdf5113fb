/**
 * Signed unsubscribe links. The token is `<payload>.<signature>`, payload = base64url(JSON
 * {u: user id, s: scope}), signature = HMAC-SHA256(key, payload) in base64url (RFC 2104; Node's
 * crypto). It carries no expiry: a link in a months-old mail must still work. It can only turn mail
 * off, so a leaked link can do nothing worse than that.
 */
import type { Knex } from 'knex';
import { createHmac, timingSafeEqual } from 'node:crypto';
import { db } from '../db.ts';
import { mailOrigin } from './env.ts';
import { signingSecret } from './secret.ts';

export const UNSUBSCRIBE_SCOPES = {
	digest: 'morning digests',
	weekly: 'weekly summaries',
	alarms: 'alarm mails',
	all: 'all Lockstep mail'
} as const;
export type UnsubscribeScope = keyof typeof UNSUBSCRIBE_SCOPES;

function sign(payload: string, secret: string): string {
	return createHmac('sha256', secret).update(payload).digest('base64url');
}

export async function unsubscribeToken(userId: string, scope: UnsubscribeScope, k: Knex = db()): Promise<string> {
	const payload = Buffer.from(JSON.stringify({ u: userId, s: scope })).toString('base64url');
	return `${payload}.${sign(payload, await signingSecret(k))}`;
}

export async function unsubscribeUrl(userId: string, scope: UnsubscribeScope, k: Knex = db()): Promise<string> {
	return `${mailOrigin()}/unsubscribe?token=${encodeURIComponent(await unsubscribeToken(userId, scope, k))}`;
}

export type TokenCheck = { ok: true; userId: string; scope: UnsubscribeScope } | { ok: false; reason: string };

export async function verifyUnsubscribeToken(token: string | null, k: Knex = db()): Promise<TokenCheck> {
	if (!token) return { ok: false, reason: 'The link has no token. Use the unsubscribe link from the mail as it is.' };
	if (token.length > 600) return { ok: false, reason: 'The token is too long to be one of Lockstep’s.' };
	const dot = token.indexOf('.');
	if (dot <= 0 || dot !== token.lastIndexOf('.'))
		return { ok: false, reason: 'The token is malformed (expected two parts separated by a dot). The link may have been cut in two by the mail program.' };
	const payload = token.slice(0, dot);
	const given = Buffer.from(token.slice(dot + 1), 'base64url');
	const expected = Buffer.from(sign(payload, await signingSecret(k)), 'base64url');
	if (given.length !== expected.length || !timingSafeEqual(given, expected))
		return { ok: false, reason: 'The token’s signature does not match. The link was changed, or it was made by another Lockstep installation.' };
	try {
		const body = JSON.parse(Buffer.from(payload, 'base64url').toString('utf8')) as { u?: unknown; s?: unknown };
		if (typeof body.u !== 'string' || typeof body.s !== 'string' || !Object.hasOwn(UNSUBSCRIBE_SCOPES, body.s))
			return { ok: false, reason: 'The token names no user or no kind of mail.' };
		return { ok: true, userId: body.u, scope: body.s as UnsubscribeScope };
	} catch {
		return { ok: false, reason: 'The token’s content is unreadable.' };
	}
}
