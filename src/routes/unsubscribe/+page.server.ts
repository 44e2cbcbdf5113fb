import { error, fail } from '@sveltejs/kit';
import { getUserById } from '$lib/server/users';
import { getSubscription, unsubscribe } from '$lib/server/mail/subscriptions';
import { UNSUBSCRIBE_SCOPES, verifyUnsubscribeToken } from '$lib/server/mail/unsubscribe';
import type { Actions, PageServerLoad } from './$types';

/**
 * Public: the signed token is the credential. GET only shows what the link will turn off (mail scanners
 * open links; a GET must not change anything); the button POSTs the change.
 */
export const load: PageServerLoad = async ({ url }) => {
	const token = url.searchParams.get('token');
	const check = await verifyUnsubscribeToken(token);
	if (!check.ok) error(400, `This unsubscribe link does not work: ${check.reason}`);
	const user = await getUserById(check.userId);
	const sub = user ? await getSubscription(user.id) : null;
	if (!user || !sub) error(404, 'The person this link was made for has no mail subscription any more: nothing is sent to them.');
	const on = { digest: sub.digestEnabled, weekly: sub.weeklySummary, alarms: sub.alarmMails, all: sub.digestEnabled || sub.weeklySummary || sub.alarmMails };
	return { token: token!, scope: check.scope, what: UNSUBSCRIBE_SCOPES[check.scope], name: user.displayName, email: sub.email, alreadyOff: !on[check.scope] };
};

export const actions: Actions = {
	default: async ({ request }) => {
		const form = await request.formData();
		const check = await verifyUnsubscribeToken(String(form.get('token') ?? '') || null);
		if (!check.ok) return fail(400, { message: `Nothing was changed: ${check.reason}` });
		const changed = await unsubscribe(check.userId, check.scope);
		if (!changed) return fail(404, { message: 'Nothing was changed: there is no subscription for this link any more.' });
		return { done: true, what: UNSUBSCRIBE_SCOPES[check.scope] };
	}
};
