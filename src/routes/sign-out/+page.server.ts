import { redirect } from '@sveltejs/kit';
import { luciaFor } from '$lib/server/auth';
import type { Actions, PageServerLoad } from './$types';

// Sign-out is a POST only; a GET here just goes home.
export const load: PageServerLoad = async () => redirect(303, '/');

export const actions: Actions = {
	default: async (event) => {
		const lucia = luciaFor(event.url);
		if (event.locals.session) await lucia.invalidateSession(event.locals.session.id);
		const c = lucia.createBlankSessionCookie();
		event.cookies.set(c.name, c.value, { path: '/', ...c.attributes });
		redirect(303, '/sign-in');
	}
};
