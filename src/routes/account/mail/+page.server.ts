import { error, fail } from '@sveltejs/kit';
import { getUserById, getUserByUsername, listUsers } from '$lib/server/users';
import { scopeOptions, subscriptionFromForm, subscriptionToInput, timeZoneNames } from '$lib/server/mail/forms';
import { defaultInput, getSubscription, saveSubscription } from '$lib/server/mail/subscriptions';
import type { Actions, PageServerLoad } from './$types';

/**
 * Whose subscription: one's own, or — for an admin — anyone's (`?user=<username>`). Checked here, in the
 * load and in the action alike, since the route policy only says "signed in".
 */
async function target(me: NonNullable<App.Locals['user']>, username: string | null) {
	if (!username || username === me.username) return (await getUserById(me.id))!;
	if (me.role !== 'admin') error(403, 'Only an admin can edit another person’s mail settings.');
	const u = await getUserByUsername(username);
	if (!u) error(404, `No user "${username.slice(0, 64)}".`);
	return u;
}

export const load: PageServerLoad = async ({ locals, url }) => {
	const me = locals.user!;
	const who = await target(me, url.searchParams.get('user'));
	const sub = await getSubscription(who.id);
	return {
		who: { username: who.username, displayName: who.displayName, self: who.id === me.id },
		exists: sub !== null,
		values: sub ? subscriptionToInput(sub) : defaultInput(who),
		areas: await scopeOptions(),
		zones: timeZoneNames(),
		people: me.role === 'admin' ? (await listUsers()).filter((u) => !u.disabled).map((u) => ({ username: u.username, displayName: u.displayName })) : []
	};
};

export const actions: Actions = {
	save: async ({ locals, request }) => {
		const form = await request.formData();
		const who = await target(locals.user!, String(form.get('user') ?? '') || null);
		const values = subscriptionFromForm(form);
		const r = await saveSubscription(who.id, values);
		if (!r.ok) return fail(400, { errors: r.errors, values, message: 'Nothing was saved: correct the fields marked below.' });
		return { ok: true, message: who.id === locals.user!.id ? 'Your mail settings are saved.' : `Mail settings of ${who.displayName} saved.` };
	}
};
