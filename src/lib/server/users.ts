/** Users: the repository and the password rules. */
import { hash, verify } from '@node-rs/argon2';
import type { Knex } from 'knex';
import { randomBytes } from 'node:crypto';
import { db } from './db.ts';
import { isRole, type Role } from './roles.ts';
import { clearAccountFailures } from './throttle.ts';
import { now } from './time.ts';

export interface User {
	id: string;
	username: string;
	displayName: string;
	email: string | null;
	role: Role;
	timeZone: string;
	disabled: boolean;
	createdAt: number;
	passwordChangedAt: number;
}

interface UserRow {
	id: string;
	username: string;
	display_name: string;
	email: string | null;
	role: string;
	password_hash: string;
	time_zone: string;
	created_at: number;
	password_changed_at: number;
	disabled_at: number | null;
}

// OWASP Password Storage Cheat Sheet (2023): argon2id, m = 19 MiB, t = 2, p = 1 as the minimum.
const ARGON2 = { memoryCost: 19456, timeCost: 2, parallelism: 1, algorithm: 2 /* Argon2id */ } as const;

export const USERNAME_PATTERN = /^[a-z][a-z0-9._-]{1,62}$/;
export const PASSWORD_MIN = 10;

function toUser(r: UserRow): User {
	if (!isRole(r.role)) throw new Error(`user ${r.username} has an unknown role "${r.role}"`);
	return {
		id: r.id,
		username: r.username,
		displayName: r.display_name,
		email: r.email,
		role: r.role,
		timeZone: r.time_zone,
		disabled: r.disabled_at !== null,
		createdAt: Number(r.created_at),
		passwordChangedAt: Number(r.password_changed_at)
	};
}

/** Validation errors keyed by field, empty when the input is acceptable. */
export function validateNewUser(input: { username: string; displayName: string; password: string; role: string }) {
	const errors: Record<string, string> = {};
	if (!USERNAME_PATTERN.test(input.username))
		errors.username = 'Use 2–63 characters: lower-case letters, digits, dot, dash or underscore, starting with a letter.';
	if (input.displayName.trim().length < 1 || input.displayName.length > 120)
		errors.displayName = 'Give a display name of 1–120 characters.';
	const pw = validatePassword(input.password);
	if (pw) errors.password = pw;
	if (!isRole(input.role)) errors.role = 'Role must be viewer, engineer or admin.';
	return errors;
}

export function validatePassword(password: string): string | null {
	if (password.length < PASSWORD_MIN) return `Use at least ${PASSWORD_MIN} characters.`;
	if (password.length > 256) return 'Use at most 256 characters.';
	return null;
}

export async function hashPassword(password: string): Promise<string> {
	return hash(password, ARGON2);
}

export async function createUser(
	input: { username: string; displayName: string; password: string; role: Role; email?: string | null; timeZone?: string },
	k: Knex = db()
): Promise<User> {
	const t = now();
	const row: UserRow = {
		id: randomBytes(15).toString('base64url'),
		username: input.username,
		display_name: input.displayName.trim(),
		email: input.email ?? null,
		role: input.role,
		password_hash: await hashPassword(input.password),
		time_zone: input.timeZone ?? 'UTC',
		created_at: t,
		password_changed_at: t,
		disabled_at: null
	};
	await k('users').insert(row);
	return toUser(row);
}

export async function getUserByUsername(username: string, k: Knex = db()): Promise<(User & { passwordHash: string }) | null> {
	const r = (await k('users').where({ username }).first()) as UserRow | undefined;
	return r ? { ...toUser(r), passwordHash: r.password_hash } : null;
}

export async function getUserById(id: string, k: Knex = db()): Promise<User | null> {
	const r = (await k('users').where({ id }).first()) as UserRow | undefined;
	return r ? toUser(r) : null;
}

export async function listUsers(k: Knex = db()): Promise<User[]> {
	const rows = (await k('users').orderBy('username')) as UserRow[];
	return rows.map(toUser);
}

export async function countUsers(k: Knex = db()): Promise<number> {
	const r = await k('users').count({ n: '*' }).first();
	return Number(r?.n ?? 0);
}

/**
 * Check a password against the stored hash. A missing user is verified against a dummy hash so that the
 * time taken does not tell whether the account exists.
 */
export async function verifyPassword(storedHash: string | null, password: string): Promise<boolean> {
	const h = storedHash ?? (await dummyHash());
	try {
		const ok = await verify(h, password);
		return storedHash !== null && ok;
	} catch {
		return false;
	}
}

let dummy: Promise<string> | null = null;
function dummyHash(): Promise<string> {
	dummy ??= hashPassword(randomBytes(16).toString('hex'));
	return dummy;
}

/**
 * Set a new password (an admin's reset or the user's own change). The account's failed sign-ins are
 * forgotten in the same transaction, so a reset lifts the account's sign-in lock, as the 429 text says.
 */
export async function setPassword(userId: string, password: string, k: Knex = db()): Promise<void> {
	const hash = await hashPassword(password);
	await k.transaction(async (trx) => {
		const u = await trx('users').where({ id: userId }).first('username');
		await trx('users').where({ id: userId }).update({ password_hash: hash, password_changed_at: now() });
		if (u) await clearAccountFailures(String(u.username), trx);
	});
}

export async function setRole(userId: string, role: Role, k: Knex = db()): Promise<void> {
	await k('users').where({ id: userId }).update({ role });
}

export async function setDisabled(userId: string, disabled: boolean, k: Knex = db()): Promise<void> {
	await k('users').where({ id: userId }).update({ disabled_at: disabled ? now() : null });
}

export async function countAdmins(k: Knex = db()): Promise<number> {
	const r = await k('users').where({ role: 'admin' }).whereNull('disabled_at').count({ n: '*' }).first();
	return Number(r?.n ?? 0);
}
