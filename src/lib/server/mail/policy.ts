/**
 * The mail policy (admin-editable, in the `settings` table under `mail_policy`). Kept beside the mail
 * code rather than in settings.ts's SCHEMAS so that the policy screen's typed list of keys stays as it
 * is; it reads and validates the same way (zod, defaults for anything missing or unreadable).
 */
import type { Knex } from 'knex';
import { z } from 'zod';
import { db } from '../db.ts';
import { now } from '../time.ts';

export const MailPolicy = z.object({
	/** At most one alarm mail per subscriber per this many minutes; alarms opening meanwhile are grouped. */
	alarmGroupMinutes: z.number().int().min(1).max(1440).default(15),
	/** Delivery attempts before a mail is recorded as failed. */
	maxAttempts: z.number().int().min(1).max(30).default(8),
	/** First retry delay; each further attempt doubles it, up to maxBackoffMinutes. */
	backoffSeconds: z.number().int().min(1).max(3600).default(30),
	maxBackoffMinutes: z.number().int().min(1).max(1440).default(60),
	/** Day of the weekly summary (0 = Sunday … 6 = Saturday), sent at the subscriber's digest time. */
	weeklyDay: z.number().int().min(0).max(6).default(1)
});
export type MailPolicy = z.infer<typeof MailPolicy>;

const KEY = 'mail_policy';

export async function getMailPolicy(k: Knex = db()): Promise<MailPolicy> {
	const row = await k('settings').where({ key: KEY }).first('value_json');
	if (!row) return MailPolicy.parse({});
	try {
		return MailPolicy.parse(JSON.parse(row.value_json));
	} catch {
		return MailPolicy.parse({});
	}
}

export async function putMailPolicy(
	value: unknown,
	userId: string | null,
	k: Knex = db()
): Promise<{ ok: true; value: MailPolicy } | { ok: false; errors: Record<string, string> }> {
	const parsed = MailPolicy.safeParse(value);
	if (!parsed.success) {
		const errors: Record<string, string> = {};
		for (const issue of parsed.error.issues) errors[issue.path.join('.') || KEY] = issue.message;
		return { ok: false, errors };
	}
	await k('settings')
		.insert({ key: KEY, value_json: JSON.stringify(parsed.data), updated_by: userId, updated_at: now() })
		.onConflict('key')
		.merge();
	return { ok: true, value: parsed.data };
}

/** Delay before attempt `attempts + 1`, after `attempts` failed ones: backoff · 2^(attempts−1), capped. */
export function retryDelayMs(attempts: number, p: MailPolicy): number {
	const ms = p.backoffSeconds * 1000 * 2 ** Math.max(0, attempts - 1);
	return Math.min(ms, p.maxBackoffMinutes * 60_000);
}
