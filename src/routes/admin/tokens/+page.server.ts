import { fail } from '@sveltejs/kit';
import { createApiToken, isTokenScope, listApiTokens, revokeApiToken, validateNewToken } from '$lib/server/api-tokens';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async () => ({ tokens: await listApiTokens() });

export const actions: Actions = {
	create: async ({ request, locals }) => {
		const form = await request.formData();
		const input = { name: String(form.get('name') ?? ''), scope: String(form.get('scope') ?? '') };
		const errors = validateNewToken(input);
		if (Object.keys(errors).length || !isTokenScope(input.scope))
			return fail(400, { action: 'create', errors, values: { name: input.name, scope: input.scope } });
		const t = await createApiToken({ name: input.name, scope: input.scope, createdBy: locals.user!.id });
		// The only time the token leaves the server: the table keeps its hash.
		return { action: 'create', created: { id: t.id, name: input.name.trim(), scope: input.scope, token: t.token } };
	},
	revoke: async ({ request }) => {
		const form = await request.formData();
		const id = Number(form.get('id'));
		if (!Number.isInteger(id) || id < 1) return fail(400, { action: 'revoke', message: 'Pick a token to revoke.' });
		if (!(await revokeApiToken(id))) return fail(404, { action: 'revoke', message: 'No such live token.' });
		return { action: 'revoke', message: 'Token revoked: requests with it are refused from now on.' };
	}
};
