/**
 * The create and revoke form actions shared by /admin/tokens (service tokens) and /account/tokens
 * (one's own personal tokens): the same checks and the same answers, told apart by `owner`.
 */
import { fail } from '@sveltejs/kit';
import { createApiToken, isTokenScope, revokeApiToken, validateNewToken } from './api-tokens.ts';
import type { Role } from './roles.ts';

/** `owner`: the person a personal token acts as; null for a service token made by `creatorId`. */
export async function createTokenAction(request: Request, creatorId: string, owner: { id: string; role: Role } | null) {
	const form = await request.formData();
	const input = { name: String(form.get('name') ?? ''), scopes: form.getAll('scope').map(String) };
	const errors = validateNewToken(input, owner?.role ?? null);
	if (Object.keys(errors).length) return fail(400, { action: 'create' as const, errors, values: input });
	const scopes = input.scopes.filter(isTokenScope);
	const t = await createApiToken({ name: input.name, scopes, createdBy: creatorId, ownerId: owner?.id ?? null });
	// The only time the token leaves the server: the table keeps its hash.
	return { action: 'create' as const, created: { id: t.id, name: input.name.trim(), scopes, token: t.token } };
}

export async function revokeTokenAction(request: Request, only: { ownerId?: string; service?: boolean }) {
	const form = await request.formData();
	const id = Number(form.get('id'));
	if (!Number.isInteger(id) || id < 1) return fail(400, { action: 'revoke' as const, message: 'Pick a token to revoke.' });
	if (!(await revokeApiToken(id, only))) return fail(404, { action: 'revoke' as const, message: 'No such live token of yours.' });
	return { action: 'revoke' as const, revoked: id, message: 'Token revoked: requests with it are refused from now on.' };
}
