/**
 * Sessions with Lucia v3 over a small Knex adapter (the published SQLite adapter pins an older
 * better-sqlite3 and would bypass Knex, so PostgreSQL would need a second adapter).
 *
 * The cookie carries Lucia's random session id; the table stores only its SHA-256, so a copy of the
 * database holds no live session tokens.
 */
import { Lucia, TimeSpan, type Adapter, type DatabaseSession, type DatabaseUser } from 'lucia';
import { createHash } from 'node:crypto';
import type { Knex } from 'knex';
import { db } from './db.ts';
import type { Role } from './roles.ts';
import { now } from './time.ts';

export function hashToken(token: string): string {
	return createHash('sha256').update(token).digest('hex');
}

interface SessionRow {
	id: string;
	user_id: string;
	expires_at: number;
}

export class KnexSessionAdapter implements Adapter {
	constructor(private readonly k: () => Knex) {}

	async getSessionAndUser(sessionId: string): Promise<[DatabaseSession | null, DatabaseUser | null]> {
		const row = await this.k()('sessions as s')
			.join('users as u', 'u.id', 's.user_id')
			.where('s.id', hashToken(sessionId))
			.whereNull('u.disabled_at')
			.first(
				's.user_id',
				's.expires_at',
				'u.username',
				'u.display_name',
				'u.role',
				'u.time_zone',
				'u.email'
			);
		if (!row) return [null, null];
		return [
			{ id: sessionId, userId: row.user_id, expiresAt: new Date(Number(row.expires_at)), attributes: {} },
			{
				id: row.user_id,
				attributes: {
					username: row.username,
					display_name: row.display_name,
					role: row.role,
					time_zone: row.time_zone,
					email: row.email
				}
			}
		];
	}

	// Only hashes are stored, so the ids returned here are hashes: usable for counting, not as cookies.
	async getUserSessions(userId: string): Promise<DatabaseSession[]> {
		const rows = (await this.k()('sessions').where({ user_id: userId })) as SessionRow[];
		return rows.map((r) => ({ id: r.id, userId: r.user_id, expiresAt: new Date(Number(r.expires_at)), attributes: {} }));
	}

	async setSession(session: DatabaseSession): Promise<void> {
		await this.k()('sessions').insert({
			id: hashToken(session.id),
			user_id: session.userId,
			expires_at: session.expiresAt.getTime(),
			created_at: now()
		});
	}

	async updateSessionExpiration(sessionId: string, expiresAt: Date): Promise<void> {
		await this.k()('sessions').where({ id: hashToken(sessionId) }).update({ expires_at: expiresAt.getTime() });
	}

	async deleteSession(sessionId: string): Promise<void> {
		await this.k()('sessions').where({ id: hashToken(sessionId) }).delete();
	}

	async deleteUserSessions(userId: string): Promise<void> {
		await this.k()('sessions').where({ user_id: userId }).delete();
	}

	async deleteExpiredSessions(): Promise<void> {
		await this.k()('sessions').where('expires_at', '<=', now()).delete();
	}
}

export const SESSION_COOKIE = 'lockstep_session';

function makeLucia(secure: boolean) {
	return new Lucia(new KnexSessionAdapter(db), {
		sessionExpiresIn: new TimeSpan(12, 'h'), // one shift and a half; extended while in use
		sessionCookie: {
			name: SESSION_COOKIE,
			expires: true, // the cookie lives as long as the server-side session
			attributes: { secure, sameSite: 'lax' }
		},
		getUserAttributes(attributes) {
			return {
				username: attributes.username,
				displayName: attributes.display_name,
				role: attributes.role,
				timeZone: attributes.time_zone,
				email: attributes.email
			};
		}
	});
}

// Secure cookies whenever the app is reached over HTTPS (or forced by LOCKSTEP_SECURE_COOKIES=true);
// plain http://127.0.0.1 in development and the demo cannot carry a Secure cookie in every browser.
export const lucia = makeLucia(process.env.LOCKSTEP_SECURE_COOKIES === 'true');
export const luciaSecure = makeLucia(true);

export function luciaFor(url: URL) {
	return url.protocol === 'https:' || process.env.LOCKSTEP_SECURE_COOKIES === 'true' ? luciaSecure : lucia;
}

declare module 'lucia' {
	interface Register {
		Lucia: typeof lucia;
		DatabaseUserAttributes: {
			username: string;
			display_name: string;
			role: Role;
			time_zone: string;
			email: string | null;
		};
	}
}
