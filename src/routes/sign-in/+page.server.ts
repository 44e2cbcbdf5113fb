import { fail, redirect } from '@sveltejs/kit';
import { luciaFor } from '$lib/server/auth';
import { clientAddress } from '$lib/server/client-address';
import { attemptSignIn, safeNext } from '$lib/server/sign-in';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals, url }) => {
	if (locals.user) redirect(303, safeNext(url.searchParams.get('next')));
	return { next: safeNext(url.searchParams.get('next')) };
};

export const actions: Actions = {
	default: async (event) => {
		const form = await event.request.formData().catch(() => null);
		if (!form) return fail(400, { username: '', message: 'The sign-in form could not be read: send it as a form (user name and password).' });
		const username = String(form.get('username') ?? '');
		const password = String(form.get('password') ?? '');
		const result = await attemptSignIn(username, password, clientAddress(event));
		if (!result.ok) return fail(result.status, { username: username.slice(0, 64), message: result.message });
		const lucia = luciaFor(event.url);
		const session = await lucia.createSession(result.userId, {});
		const c = lucia.createSessionCookie(session.id);
		event.cookies.set(c.name, c.value, { path: '/', ...c.attributes, httpOnly: true });
		redirect(303, safeNext(String(form.get('next') ?? '/')));
	}
};
