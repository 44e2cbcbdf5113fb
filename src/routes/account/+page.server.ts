import { fail } from '@sveltejs/kit';
import { luciaFor } from '$lib/server/auth';
import { clientAddress } from '$lib/server/client-address';
import { verifyCurrentPassword } from '$lib/server/sign-in';
import { setPassword, validatePassword } from '$lib/server/users';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals }) => ({ me: locals.user });

export const actions: Actions = {
	/** Change one's own password; every other session of the account is signed out. */
	password: async (event) => {
		const user = event.locals.user!;
		const form = await event.request.formData();
		const current = String(form.get('current') ?? '');
		const next = String(form.get('next') ?? '');
		const repeat = String(form.get('repeat') ?? '');
		// Throttled like a sign-in (same limits, same counts): a session cannot guess the password faster.
		const check = await verifyCurrentPassword(user.username, current, clientAddress(event));
		if (!check.ok) return fail(check.status, { field: 'current', message: check.message });
		const problem = validatePassword(next);
		if (problem) return fail(400, { field: 'next', message: problem });
		if (next !== repeat) return fail(400, { field: 'repeat', message: 'The two new passwords differ.' });
		await setPassword(user.id, next);
		const lucia = luciaFor(event.url);
		await lucia.invalidateUserSessions(user.id);
		const session = await lucia.createSession(user.id, {});
		const c = lucia.createSessionCookie(session.id);
		event.cookies.set(c.name, c.value, { path: '/', ...c.attributes });
		return { ok: true, message: 'Password changed. Your other sessions were signed out.' };
	}
};
