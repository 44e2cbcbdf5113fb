/**
 * Digests: compose one for a subscriber and period, queue it under its dedupe key, and the schedule
 * that does so at each subscriber's digest time in their own time zone.
 *
 * "Never twice for the same period": the scheduled digest's dedupe key is the user and the scheduled
 * instant (`digest:<user>:<ISO instant>`), and the subscription's `last_digest_period_end` moves to that
 * instant in the same transaction as the enqueue. A restart, a second scheduler or a rerun of the job
 * finds either the moved mark or the unique key, and queues nothing.
 */
import type { Knex } from 'knex';
import { db } from '../db.ts';
import { now } from '../time.ts';
import { gatherDigest } from './digest-data.ts';
import { renderDigest, type RenderedMail } from './digest-render.ts';
import { enqueueMail } from './outbox.ts';
import { getMailPolicy } from './policy.ts';
import { chambersInScope, getSubscription, scopeLabel, type Subscription } from './subscriptions.ts';
import { unsubscribeUrl } from './unsubscribe.ts';
import { latestScheduled } from './zones.ts';

const DAY = 86_400_000;
/** A digest after a long pause covers at most this much (a month of alarms is not a morning read). */
export const MAX_DIGEST_SPAN_MS = 7 * DAY;

export type DigestKind = 'digest' | 'weekly';

export async function composeDigest(
	sub: Subscription,
	user: { id: string; displayName: string },
	period: { from: number; to: number },
	kind: DigestKind,
	k: Knex = db()
): Promise<RenderedMail> {
	const chamberIds = await chambersInScope(sub, k);
	const data = await gatherDigest(chamberIds, period, k);
	return renderDigest(data, {
		kind,
		displayName: user.displayName,
		timeZone: sub.timeZone,
		scopeLabel: scopeLabel(sub),
		unsubscribeUrl: await unsubscribeUrl(user.id, kind, k)
	});
}

async function queueDigest(
	sub: Subscription,
	user: { id: string; displayName: string },
	period: { from: number; to: number },
	kind: DigestKind,
	dedupeKey: string,
	k: Knex
): Promise<{ id: number; created: boolean }> {
	const mail = await composeDigest(sub, user, period, kind, k);
	return enqueueMail(
		{
			kind,
			to: sub.email,
			userId: user.id,
			subject: mail.subject,
			text: mail.text,
			html: mail.html,
			attachments: mail.attachments,
			headers: { 'List-Unsubscribe': `<${await unsubscribeUrl(user.id, kind, k)}>` },
			dedupeKey
		},
		k
	);
}

export interface ScheduleResult {
	queued: { userId: string; kind: DigestKind; periodEnd: number; outboxId: number }[];
}

/**
 * Queue every digest and weekly summary that has come due by `at`. Run it often (every minute): each
 * subscriber's digest is due at their digest time in their zone, and goes once.
 */
export async function runDigestSchedule(at: number = now(), k: Knex = db()): Promise<ScheduleResult> {
	const policy = await getMailPolicy(k);
	const rows = await k('mail_subscriptions as s')
		.join('users as u', 'u.id', 's.user_id')
		.whereNull('u.disabled_at')
		.where((w) => w.where('s.digest_enabled', true).orWhere('s.weekly_summary', true))
		.select('s.user_id', 'u.display_name');
	const out: ScheduleResult = { queued: [] };
	for (const r of rows) {
		const sub = await getSubscription(r.user_id, k);
		if (!sub) continue;
		const user = { id: r.user_id, displayName: r.display_name };
		const plan: { kind: DigestKind; due: number; last: number | null; span: number; column: string }[] = [];
		if (sub.digestEnabled) plan.push({ kind: 'digest', due: latestScheduled(at, sub.timeZone, sub.digestTime), last: sub.lastDigestPeriodEnd, span: DAY, column: 'last_digest_period_end' });
		if (sub.weeklySummary)
			plan.push({ kind: 'weekly', due: latestScheduled(at, sub.timeZone, sub.digestTime, policy.weeklyDay), last: sub.lastWeeklyPeriodEnd, span: 7 * DAY, column: 'last_weekly_period_end' });
		for (const p of plan) {
			if (p.last !== null && p.due <= p.last) continue;
			const from = p.last === null ? p.due - p.span : Math.max(p.last, p.due - Math.max(p.span, MAX_DIGEST_SPAN_MS));
			const key = `${p.kind}:${user.id}:${new Date(p.due).toISOString()}`;
			const q = await k.transaction(async (trx) => {
				// Re-read the mark inside the transaction: another scheduler may have moved it meanwhile.
				const mark = await trx('mail_subscriptions').where({ user_id: user.id }).first(p.column);
				if (mark?.[p.column] !== null && mark?.[p.column] !== undefined && Number(mark[p.column]) >= p.due) return null;
				const res = await queueDigest(sub, user, { from, to: p.due }, p.kind, key, trx);
				await trx('mail_subscriptions').where({ user_id: user.id }).update({ [p.column]: p.due });
				return res;
			});
			if (q?.created) out.queued.push({ userId: user.id, kind: p.kind, periodEnd: p.due, outboxId: q.id });
		}
	}
	return out;
}

/**
 * "Send digest now" (admin page): a digest for any period, queued at once. Keyed by user and period, so
 * a double click queues one mail; the schedule's own mark is not moved.
 */
export async function queueDigestNow(
	userId: string,
	period: { from: number; to: number },
	kind: DigestKind = 'digest',
	k: Knex = db()
): Promise<{ ok: true; id: number; created: boolean } | { ok: false; message: string }> {
	if (!(period.to > period.from)) return { ok: false, message: 'The period must end after it starts.' };
	if (period.to - period.from > 31 * DAY) return { ok: false, message: 'Choose a period of at most 31 days.' };
	const sub = await getSubscription(userId, k);
	if (!sub) return { ok: false, message: 'This person has no mail subscription yet: set one up first (an address is needed).' };
	const user = await k('users').where({ id: userId }).first('id', 'display_name');
	if (!user) return { ok: false, message: 'No such person.' };
	const key = `${kind}-now:${userId}:${new Date(period.from).toISOString()}/${new Date(period.to).toISOString()}`;
	const r = await queueDigest(sub, { id: user.id, displayName: user.display_name }, period, kind, key, k);
	return { ok: true, ...r };
}
