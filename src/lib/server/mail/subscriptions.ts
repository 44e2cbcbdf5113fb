/**
 * Mail subscriptions: one per user. Each user edits their own; admins edit anyone's (the routes decide
 * who may call what). Validation answers field by field; a save is one statement, so nothing is
 * half-written.
 */
import type { Knex } from 'knex';
import { db } from '../db.ts';
import { now } from '../time.ts';
import { getMailPolicy } from './policy.ts';
import { isTimeZone, latestScheduled, parseClockTime } from './zones.ts';
import type { UnsubscribeScope } from './unsubscribe.ts';

export type Severity = 'warning' | 'alarm';

export interface Subscription {
	userId: string;
	email: string;
	areaCodes: string[];
	chamberCodes: string[];
	digestEnabled: boolean;
	digestTime: string;
	timeZone: string;
	alarmMails: boolean;
	alarmMinSeverity: Severity;
	weeklySummary: boolean;
	lastDigestPeriodEnd: number | null;
	lastWeeklyPeriodEnd: number | null;
	alarmCursor: number | null;
	lastAlarmMailAt: number | null;
	updatedAt: number;
}

// eslint-disable-next-line @typescript-eslint/no-explicit-any
function toSubscription(r: any): Subscription {
	const list = (s: string | null) => {
		try {
			const v = JSON.parse(s ?? '[]');
			return Array.isArray(v) ? v.map(String) : [];
		} catch {
			return [];
		}
	};
	const num = (v: unknown) => (v === null || v === undefined ? null : Number(v));
	return {
		userId: r.user_id,
		email: r.email,
		areaCodes: list(r.area_codes_json),
		chamberCodes: list(r.chamber_codes_json),
		digestEnabled: Boolean(r.digest_enabled),
		digestTime: r.digest_time,
		timeZone: r.time_zone,
		alarmMails: Boolean(r.alarm_mails),
		alarmMinSeverity: r.alarm_min_severity === 'warning' ? 'warning' : 'alarm',
		weeklySummary: Boolean(r.weekly_summary),
		lastDigestPeriodEnd: num(r.last_digest_period_end),
		lastWeeklyPeriodEnd: num(r.last_weekly_period_end),
		alarmCursor: num(r.alarm_cursor),
		lastAlarmMailAt: num(r.last_alarm_mail_at),
		updatedAt: Number(r.updated_at)
	};
}

export async function getSubscription(userId: string, k: Knex = db()): Promise<Subscription | null> {
	const r = await k('mail_subscriptions').where({ user_id: userId }).first();
	return r ? toSubscription(r) : null;
}

export async function listSubscriptions(k: Knex = db()): Promise<(Subscription & { username: string; displayName: string; disabled: boolean })[]> {
	const rows = await k('mail_subscriptions as s')
		.join('users as u', 'u.id', 's.user_id')
		.orderBy('u.username')
		.select('s.*', 'u.username', 'u.display_name', 'u.disabled_at');
	return rows.map((r) => ({ ...toSubscription(r), username: r.username, displayName: r.display_name, disabled: r.disabled_at !== null }));
}

/** What the form edits: the subscription's own settings, the severity as typed (checked on save). */
export type SubscriptionInput = Pick<Subscription, 'email' | 'areaCodes' | 'chamberCodes' | 'digestEnabled' | 'digestTime' | 'timeZone' | 'alarmMails' | 'weeklySummary'> & {
	alarmMinSeverity: string;
};

/** The form's starting values for a user without a subscription: their account's address and zone. */
export function defaultInput(user: { email: string | null; timeZone: string }): SubscriptionInput {
	return {
		email: user.email ?? '',
		areaCodes: [],
		chamberCodes: [],
		digestEnabled: true,
		digestTime: '06:30',
		timeZone: user.timeZone || 'UTC',
		alarmMails: false,
		alarmMinSeverity: 'alarm',
		weeklySummary: false
	};
}

// A pragmatic address check (one @, no spaces, a dot in the domain or a bare host for lab relays);
// the relay is the judge of deliverability.
const EMAIL = /^[^\s@<>()",;]{1,64}@[A-Za-z0-9](?:[A-Za-z0-9-]{0,62}[A-Za-z0-9])?(?:\.[A-Za-z0-9](?:[A-Za-z0-9-]{0,62}[A-Za-z0-9])?)*$/;

export async function validateSubscription(input: SubscriptionInput, k: Knex = db()): Promise<Record<string, string>> {
	const errors: Record<string, string> = {};
	const email = input.email.trim();
	if (!email) errors.email = 'Give the address the mail should go to.';
	else if (email.length > 254 || !EMAIL.test(email)) errors.email = `"${email.slice(0, 80)}" is not an e-mail address (name@host).`;
	if (!parseClockTime(input.digestTime)) errors.digestTime = 'Give the digest time as hours and minutes, e.g. 06:30.';
	if (!isTimeZone(input.timeZone)) errors.timeZone = `"${input.timeZone.slice(0, 64)}" is not a time zone name (e.g. Europe/Vienna, America/Phoenix, UTC).`;
	if (input.alarmMinSeverity !== 'warning' && input.alarmMinSeverity !== 'alarm') errors.alarmMinSeverity = 'Choose warning or alarm.';
	if (input.areaCodes.length) {
		const known = new Set(await k('areas').whereIn('code', input.areaCodes).pluck('code'));
		const unknown = input.areaCodes.filter((c) => !known.has(c));
		if (unknown.length) errors.areaCodes = `No area ${unknown.join(', ')}.`;
	}
	if (input.chamberCodes.length) {
		const known = new Set<string>();
		for (let i = 0; i < input.chamberCodes.length; i += 500)
			for (const c of await k('chambers').whereIn('code', input.chamberCodes.slice(i, i + 500)).pluck('code')) known.add(c);
		const unknown = input.chamberCodes.filter((c) => !known.has(c));
		if (unknown.length) errors.chamberCodes = `No chamber ${unknown.slice(0, 10).join(', ')}${unknown.length > 10 ? '…' : ''}.`;
	}
	return errors;
}

async function maxActionId(k: Knex): Promise<number> {
	const r = await k('alarm_actions').max({ m: 'id' }).first();
	return Number(r?.m ?? 0);
}

/**
 * Create or replace a user's subscription. Turning a kind of mail on starts it from now: alarms that
 * opened before are not mailed after the fact, and the first digest comes at the next digest time
 * (not at once for the day that has passed — "send digest now" on the admin page is for that).
 */
export async function saveSubscription(userId: string, input: SubscriptionInput, k: Knex = db()): Promise<{ ok: true } | { ok: false; errors: Record<string, string> }> {
	const errors = await validateSubscription(input, k);
	if (Object.keys(errors).length) return { ok: false, errors };
	await k.transaction(async (trx) => {
		const before = await trx('mail_subscriptions').where({ user_id: userId }).first('alarm_mails', 'digest_enabled', 'weekly_summary');
		const row = {
			user_id: userId,
			email: input.email.trim(),
			area_codes_json: JSON.stringify([...new Set(input.areaCodes)].sort()),
			chamber_codes_json: JSON.stringify([...new Set(input.chamberCodes)].sort()),
			digest_enabled: input.digestEnabled,
			digest_time: input.digestTime.trim(),
			time_zone: input.timeZone,
			alarm_mails: input.alarmMails,
			alarm_min_severity: input.alarmMinSeverity,
			weekly_summary: input.weeklySummary,
			updated_at: now()
		};
		const startsAlarms = input.alarmMails && !(before && before.alarm_mails);
		const marks: Record<string, number> = {};
		if (startsAlarms) marks.alarm_cursor = await maxActionId(trx);
		const t = now();
		if (input.digestEnabled && !(before && before.digest_enabled)) marks.last_digest_period_end = latestScheduled(t, input.timeZone, input.digestTime);
		if (input.weeklySummary && !(before && before.weekly_summary))
			marks.last_weekly_period_end = latestScheduled(t, input.timeZone, input.digestTime, (await getMailPolicy(trx)).weeklyDay);
		if (before) await trx('mail_subscriptions').where({ user_id: userId }).update({ ...row, ...marks });
		else await trx('mail_subscriptions').insert({ ...row, ...marks });
	});
	return { ok: true };
}

/** What a signed unsubscribe link turns off. Returns false when the user has no subscription. */
export async function unsubscribe(userId: string, scope: UnsubscribeScope, k: Knex = db()): Promise<boolean> {
	const patch: Record<string, unknown> = { updated_at: now() };
	if (scope === 'digest' || scope === 'all') patch.digest_enabled = false;
	if (scope === 'weekly' || scope === 'all') patch.weekly_summary = false;
	if (scope === 'alarms' || scope === 'all') patch.alarm_mails = false;
	const n = await k('mail_subscriptions').where({ user_id: userId }).update(patch);
	return n > 0;
}

/** The chamber ids a subscription covers (no areas and no chambers chosen = the whole fab). */
export async function chambersInScope(sub: Pick<Subscription, 'areaCodes' | 'chamberCodes'>, k: Knex = db()): Promise<number[]> {
	const q = k('chambers as c').join('tools as t', 't.id', 'c.tool_id').join('areas as a', 'a.id', 't.area_id');
	if (sub.areaCodes.length || sub.chamberCodes.length)
		q.where((w) => {
			if (sub.areaCodes.length) w.orWhereIn('a.code', sub.areaCodes);
			if (sub.chamberCodes.length) w.orWhereIn('c.code', sub.chamberCodes);
		});
	return q.orderBy('c.code').pluck('c.id');
}

export function scopeLabel(sub: Pick<Subscription, 'areaCodes' | 'chamberCodes'>): string {
	if (!sub.areaCodes.length && !sub.chamberCodes.length) return 'the whole fab';
	const parts: string[] = [];
	if (sub.areaCodes.length) parts.push(`area${sub.areaCodes.length > 1 ? 's' : ''} ${sub.areaCodes.join(', ')}`);
	if (sub.chamberCodes.length) parts.push(`chamber${sub.chamberCodes.length > 1 ? 's' : ''} ${sub.chamberCodes.join(', ')}`);
	return parts.join(' and ');
}
