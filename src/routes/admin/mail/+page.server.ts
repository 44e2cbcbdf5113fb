import { error, fail } from '@sveltejs/kit';
import { config } from '$lib/server/config';
import { queueDigestNow } from '$lib/server/mail/digest';
import { mailOrigin, sinkWanted } from '$lib/server/mail/env';
import { parseLocalDateTime } from '$lib/server/mail/forms';
import { clockZone } from '$lib/server/clock';
import { framedHtml, getSinkMessage, listSinkMessages } from '$lib/server/mail/mailbox';
import { listOutbox, requeueMail, type OutboxState } from '$lib/server/mail/outbox';
import { getMailPolicy, putMailPolicy } from '$lib/server/mail/policy';
import { sendDue } from '$lib/server/mail/sender';
import { getSubscription, listSubscriptions } from '$lib/server/mail/subscriptions';
import { createMailTransport } from '$lib/server/mail/transport';
import { now } from '$lib/server/time';
import type { Actions, PageServerLoad } from './$types';

const STATES: OutboxState[] = ['queued', 'sending', 'sent', 'failed'];
const HOUR = 3_600_000;

export const load: PageServerLoad = async ({ url }) => {
	const state = url.searchParams.get('state');
	const messageParam = url.searchParams.get('message');
	let message = null;
	if (messageParam !== null) {
		const id = Number(messageParam);
		if (!Number.isInteger(id) || id <= 0) error(404, `No message "${messageParam.slice(0, 20)}" in the mailbox.`);
		const m = await getSinkMessage(id);
		if (!m) error(404, `No message ${id} in the mailbox.`);
		message = { ...m, html: m.html ? framedHtml(m.html) : null };
	}
	return {
		stateFilter: STATES.includes(state as OutboxState) ? (state as OutboxState) : null,
		outbox: await listOutbox({ state: STATES.includes(state as OutboxState) ? (state as OutboxState) : undefined, limit: 100 }),
		mailbox: await listSinkMessages(50),
		message,
		subscriptions: await listSubscriptions(),
		policy: await getMailPolicy(),
		smtp: { host: config.smtp.host, port: config.smtp.port, from: config.smtp.from, sink: sinkWanted(), origin: mailOrigin(), originSet: config.origin !== null }
	};
};

/** Deliver what is due right away, so "send now" shows up in the mailbox without waiting for the job. */
async function kickSender(): Promise<string> {
	try {
		const r = await sendDue(createMailTransport(undefined, { connectMs: 3000, socketMs: 10_000 }), { batch: 10 });
		if (r.sent) return ' and delivered';
		return r.retrying ? ': the mail server did not answer, the outbox job will retry' : '';
	} catch {
		return ': the outbox job will deliver it';
	}
}

export const actions: Actions = {
	send: async ({ request, locals, cookies }) => {
		const f = await request.formData();
		const userId = String(f.get('userId') ?? '');
		const kind = f.get('kind') === 'weekly' ? 'weekly' : 'digest';
		const preset = String(f.get('period') ?? 'since-last');
		const values = { userId, kind, period: preset, from: String(f.get('from') ?? ''), to: String(f.get('to') ?? '') };
		const sub = userId ? await getSubscription(userId) : null;
		if (!sub) return fail(400, { action: 'send', errors: { userId: 'Choose a person with a mail subscription.' }, values });
		const zone = clockZone(cookies, locals.user);
		const t = now();
		let period: { from: number; to: number };
		if (preset === '24h') period = { from: t - 24 * HOUR, to: t };
		else if (preset === '7d') period = { from: t - 7 * 24 * HOUR, to: t };
		else if (preset === 'custom') {
			const from = parseLocalDateTime(values.from, zone);
			const to = parseLocalDateTime(values.to, zone);
			const errors: Record<string, string> = {};
			if (from === null) errors.from = `Give the start as a date and time (in ${zone}).`;
			if (to === null) errors.to = `Give the end as a date and time (in ${zone}).`;
			if (from !== null && to !== null && to <= from) errors.to = 'The end must come after the start.';
			if (Object.keys(errors).length) return fail(400, { action: 'send', errors, values });
			period = { from: from!, to: to! };
		} else period = { from: Math.min(sub.lastDigestPeriodEnd ?? t - 24 * HOUR, t - HOUR), to: t };
		const r = await queueDigestNow(userId, period, kind);
		if (!r.ok) return fail(400, { action: 'send', errors: { period: r.message }, values });
		const delivered = await kickSender();
		return { action: 'send', message: r.created ? `Queued as mail #${r.id}${delivered}.` : `That digest is queued already (mail #${r.id}); nothing new was queued.` };
	},
	requeue: async ({ request }) => {
		const id = Number((await request.formData()).get('id'));
		if (!Number.isInteger(id) || !(await requeueMail(id))) return fail(400, { action: 'requeue', message: 'Only a failed mail can be queued again.' });
		return { action: 'requeue', message: `Mail #${id} is queued again${await kickSender()}.` };
	},
	policy: async ({ request, locals }) => {
		const f = await request.formData();
		const num = (n: string) => (String(f.get(n) ?? '').trim() === '' ? undefined : Number(f.get(n)));
		const value = {
			alarmGroupMinutes: num('alarmGroupMinutes'),
			maxAttempts: num('maxAttempts'),
			backoffSeconds: num('backoffSeconds'),
			maxBackoffMinutes: num('maxBackoffMinutes'),
			weeklyDay: num('weeklyDay')
		};
		const r = await putMailPolicy(value, locals.user!.id);
		if (!r.ok) return fail(400, { action: 'policy', errors: r.errors, values: value });
		return { action: 'policy', message: 'Mail policy saved.' };
	}
};
