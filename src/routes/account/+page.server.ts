import { fail } from '@sveltejs/kit';
import { luciaFor } from '$lib/server/auth';
import { getUserByUsername, setPassword, validatePassword, verifyPassword } from '$lib/server/users';
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
		const record = await getUserByUsername(user.username);
		if (!record || !(await verifyPassword(record.passwordHash, current)))
			return fail(400, { field: 'current', message: 'The current password is not right.' });
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
