import { listApiTokens, SCOPE_LABELS, TOKEN_SCOPES, validateNewToken } from '$lib/server/api-tokens';
import { createTokenAction, revokeTokenAction } from '$lib/server/token-actions';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals }) => {
	const me = locals.user!;
	return {
		tokens: await listApiTokens({ ownerId: me.id }),
		// Only the scopes this person's role can use (validateNewToken says why the others are refused).
		scopes: TOKEN_SCOPES.filter((s) => !validateNewToken({ name: 'x', scopes: s === 'register' ? ['ingest', s] : [s] }, me.role).scope).map((s) => ({
			value: s,
			label: SCOPE_LABELS[s]
		}))
	};
};

export const actions: Actions = {
	create: async ({ request, locals }) => createTokenAction(request, locals.user!.id, { id: locals.user!.id, role: locals.user!.role }),
	revoke: async ({ request, locals }) => revokeTokenAction(request, { ownerId: locals.user!.id })
};
