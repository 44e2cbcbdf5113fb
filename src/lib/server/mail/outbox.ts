/**
 * The outbox: every mail is a row here before any SMTP conversation. `enqueueMail` is idempotent on the
 * dedupe key (a unique column), which is what stops a digest going out twice for one period, even when
 * two schedulers race or a process restarts in between. The sender (sender.ts) moves rows through
 * queued → sending → sent | failed.
 */
import type { Knex } from 'knex';
import { randomUUID } from 'node:crypto';
import { db } from '../db.ts';
import { now } from '../time.ts';
import { fromDomain } from './transport.ts';

export type OutboxState = 'queued' | 'sending' | 'sent' | 'failed';
export const MAIL_KINDS = { digest: 'Morning digest', weekly: 'Weekly summary', alarm: 'Alarm mail', test: 'Test mail' } as const;
export type MailKind = keyof typeof MAIL_KINDS;

export interface InlineAttachment {
	cid: string;
	filename: string;
	contentType: string;
	/** utf-8 text (the SVG chart) */
	content: string;
}

export interface NewMail {
	kind: MailKind;
	to: string;
	userId: string | null;
	subject: string;
	text: string;
	html: string | null;
	attachments?: InlineAttachment[];
	headers?: Record<string, string>;
	/** null: never deduplicated */
	dedupeKey: string | null;
}

const idOf = (r: unknown) => (typeof r === 'object' && r !== null ? (r as { id: number }).id : (r as number));

/**
 * Queue a mail. With a dedupe key that is queued already, nothing is inserted and the existing row's id
 * is returned with `created: false`.
 */
export async function enqueueMail(m: NewMail, k: Knex = db()): Promise<{ id: number; created: boolean }> {
	const t = now();
	const rows = await k('mail_outbox')
		.insert({
			kind: m.kind,
			to_address: m.to,
			user_id: m.userId,
			subject: m.subject.slice(0, 300),
			text_body: m.text,
			html_body: m.html,
			attachments_json: m.attachments?.length ? JSON.stringify(m.attachments) : null,
			headers_json: m.headers ? JSON.stringify(m.headers) : null,
			dedupe_key: m.dedupeKey,
			message_id: `<${randomUUID()}@${fromDomain()}>`,
			state: 'queued',
			attempts: 0,
			next_attempt_at: t,
			created_at: t
		})
		.onConflict('dedupe_key')
		.ignore()
		.returning('id');
	if (rows.length) return { id: idOf(rows[0]), created: true };
	const existing = await k('mail_outbox').where({ dedupe_key: m.dedupeKey }).first('id');
	return { id: existing.id, created: false };
}

export interface OutboxRow {
	id: number;
	kind: string;
	to: string;
	userId: string | null;
	userName: string | null;
	subject: string;
	state: OutboxState;
	attempts: number;
	nextAttemptAt: number;
	lastError: string | null;
	createdAt: number;
	sentAt: number | null;
	dedupeKey: string | null;
	messageId: string | null;
}

export async function listOutbox(q: { state?: OutboxState; limit?: number } = {}, k: Knex = db()): Promise<{ rows: OutboxRow[]; counts: Record<OutboxState, number> }> {
	const query = k('mail_outbox as o').leftJoin('users as u', 'u.id', 'o.user_id');
	if (q.state) query.where('o.state', q.state);
	const rows = await query
		.orderBy('o.id', 'desc')
		.limit(q.limit ?? 100)
		.select('o.*', 'u.display_name');
	const counts: Record<OutboxState, number> = { queued: 0, sending: 0, sent: 0, failed: 0 };
	const grouped = (await k('mail_outbox').groupBy('state').select('state').count({ n: '*' })) as { state: OutboxState; n: number | string }[];
	for (const c of grouped) counts[c.state] = Number(c.n);
	return {
		counts,
		rows: rows.map((r) => ({
			id: r.id,
			kind: r.kind,
			to: r.to_address,
			userId: r.user_id,
			userName: r.display_name ?? null,
			subject: r.subject,
			state: r.state,
			attempts: Number(r.attempts),
			nextAttemptAt: Number(r.next_attempt_at),
			lastError: r.last_error,
			createdAt: Number(r.created_at),
			sentAt: r.sent_at === null ? null : Number(r.sent_at),
			dedupeKey: r.dedupe_key,
			messageId: r.message_id
		}))
	};
}

/** Put a failed mail back in the queue (an admin's decision, e.g. after the relay was fixed). */
export async function requeueMail(id: number, k: Knex = db()): Promise<boolean> {
	const n = await k('mail_outbox').where({ id, state: 'failed' }).update({ state: 'queued', next_attempt_at: now(), claim_token: null });
	return n > 0;
}
