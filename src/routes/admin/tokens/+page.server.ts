import { listApiTokens, SCOPE_LABELS, SERVICE_SCOPES } from '$lib/server/api-tokens';
import { createTokenAction, revokeTokenAction } from '$lib/server/token-actions';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async () => ({
	tokens: await listApiTokens({ service: true }),
	personal: (await listApiTokens()).filter((t) => t.ownerName !== null && t.revokedAt === null),
	scopes: SERVICE_SCOPES.map((s) => ({ value: s, label: SCOPE_LABELS[s] }))
});

export const actions: Actions = {
	create: async ({ request, locals }) => createTokenAction(request, locals.user!.id, null),
	// Admins revoke service tokens and, should one leak, anyone's personal token.
	revoke: async ({ request }) => revokeTokenAction(request, {})
};
