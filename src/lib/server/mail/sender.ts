/**
 * The outbox sender. Each call claims due rows atomically (one UPDATE that only takes rows still
 * `queued`, stamped with a fresh claim token), delivers them one by one and records each outcome under
 * that token, so two senders — the jobs process and a web request's "send now" — never send one row
 * twice.
 *
 * Failures: a 5xx reply is permanent (RFC 5321 §4.2.1) and fails the mail at once; anything else
 * (connection refused, timeout, 4xx) is retried after backoff · 2^(attempt−1), until the policy's
 * attempt limit, then recorded as failed with the last error.
 *
 * Restarts: a row left in `sending` by a process that died mid-conversation is taken back after the
 * lease. Whether the relay had accepted it cannot be known, so it is sent again with the same
 * Message-ID (receivers may discard the repeat): at-least-once in that one narrow case, exactly once
 * otherwise — a mail that could not be handed over is never marked sent, and one that was is never
 * claimed again.
 */
import type { Knex } from 'knex';
import type { Transporter } from 'nodemailer';
import { randomBytes } from 'node:crypto';
import { config } from '../config.ts';
import { db } from '../db.ts';
import { now } from '../time.ts';
import type { InlineAttachment } from './outbox.ts';
import { getMailPolicy, retryDelayMs, type MailPolicy } from './policy.ts';

export const SENDING_LEASE_MS = 10 * 60_000;

export interface SendReport {
	claimed: number;
	sent: number;
	retrying: number;
	failed: number;
	recovered: number;
}

function describe(e: unknown): { message: string; permanent: boolean } {
	const err = e as { code?: string; responseCode?: number; response?: string; message?: string };
	const code = typeof err.responseCode === 'number' ? err.responseCode : null;
	const text = [err.code, code, err.response ?? err.message].filter((x) => x !== undefined && x !== null && x !== '').join(' ');
	return { message: text.slice(0, 1000) || 'unknown error', permanent: code !== null && code >= 500 && code < 600 };
}

function isConnectionError(e: unknown): boolean {
	const code = (e as { code?: string }).code;
	return code === 'ECONNECTION' || code === 'ETIMEDOUT' || code === 'ESOCKET' || code === 'ECONNREFUSED' || code === 'EDNS';
}

export async function sendDue(
	transport: Transporter,
	opts: { at?: number; batch?: number; policy?: MailPolicy; from?: string } = {},
	k: Knex = db()
): Promise<SendReport> {
	const at = opts.at ?? now();
	const policy = opts.policy ?? (await getMailPolicy(k));
	const report: SendReport = { claimed: 0, sent: 0, retrying: 0, failed: 0, recovered: 0 };
	report.recovered = await k('mail_outbox')
		.where({ state: 'sending' })
		.andWhere('claimed_at', '<', at - SENDING_LEASE_MS)
		.update({ state: 'queued', claim_token: null, next_attempt_at: at });
	const token = randomBytes(16).toString('hex');
	await k('mail_outbox')
		.whereIn(
			'id',
			k('mail_outbox')
				.select('id')
				.where({ state: 'queued' })
				.andWhere('next_attempt_at', '<=', at)
				.orderBy([{ column: 'next_attempt_at' }, { column: 'id' }])
				.limit(opts.batch ?? 25)
		)
		.andWhere({ state: 'queued' })
		.update({ state: 'sending', claim_token: token, claimed_at: at });
	const rows = await k('mail_outbox').where({ claim_token: token, state: 'sending' }).orderBy('id');
	report.claimed = rows.length;
	for (let i = 0; i < rows.length; i++) {
		const r = rows[i];
		const attempts = Number(r.attempts) + 1;
		try {
			const attachments = r.attachments_json ? (JSON.parse(r.attachments_json) as InlineAttachment[]) : [];
			await transport.sendMail({
				from: opts.from ?? config.smtp.from,
				to: r.to_address,
				subject: r.subject,
				text: r.text_body,
				html: r.html_body ?? undefined,
				messageId: r.message_id ?? undefined,
				headers: r.headers_json ? JSON.parse(r.headers_json) : undefined,
				attachments: attachments.map((a) => ({ filename: a.filename, content: a.content, contentType: a.contentType, cid: a.cid, contentDisposition: 'inline' as const }))
			});
			await k('mail_outbox')
				.where({ id: r.id, claim_token: token })
				.update({ state: 'sent', sent_at: now(), attempts, last_error: null, claim_token: null });
			report.sent++;
		} catch (e) {
			const { message, permanent } = describe(e);
			const final = permanent || attempts >= policy.maxAttempts;
			await k('mail_outbox')
				.where({ id: r.id, claim_token: token })
				.update({
					state: final ? 'failed' : 'queued',
					attempts,
					last_error: final && !permanent ? `gave up after ${attempts} attempts: ${message}` : message,
					next_attempt_at: final ? at : at + retryDelayMs(attempts, policy),
					claim_token: null
				});
			if (final) report.failed++;
			else report.retrying++;
			// The relay cannot be reached: the rest of the batch waits as long, without spending an attempt.
			if (!final && isConnectionError(e)) {
				const rest = rows.slice(i + 1).map((x) => x.id);
				if (rest.length)
					await k('mail_outbox').whereIn('id', rest).andWhere({ claim_token: token }).update({ state: 'queued', claim_token: null, next_attempt_at: at + retryDelayMs(attempts, policy) });
				report.retrying += rest.length;
				break;
			}
		}
	}
	return report;
}
