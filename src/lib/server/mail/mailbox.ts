/** The local sink's mailbox, for the admin page: newest first, and one message with its parts. */
import type { Knex } from 'knex';
import { db } from '../db.ts';

export interface SinkMessageSummary {
	id: number;
	receivedAt: number;
	to: string[];
	subject: string;
	sizeBytes: number;
}

export interface SinkMessage extends SinkMessageSummary {
	from: string | null;
	messageId: string | null;
	text: string | null;
	html: string | null;
	attachments: { filename: string | null; contentType: string; cid: string | null; size: number }[];
}

export async function listSinkMessages(limit = 50, k: Knex = db()): Promise<{ rows: SinkMessageSummary[]; total: number }> {
	const rows = await k('mail_sink_messages').orderBy('id', 'desc').limit(limit).select('id', 'received_at', 'envelope_to_json', 'subject', 'size_bytes');
	const total = Number((await k('mail_sink_messages').count({ n: '*' }).first())?.n ?? 0);
	return {
		total,
		rows: rows.map((r) => ({ id: r.id, receivedAt: Number(r.received_at), to: JSON.parse(r.envelope_to_json), subject: r.subject ?? '', sizeBytes: Number(r.size_bytes) }))
	};
}

export async function getSinkMessage(id: number, k: Knex = db()): Promise<SinkMessage | null> {
	const r = await k('mail_sink_messages').where({ id }).first();
	if (!r) return null;
	return {
		id: r.id,
		receivedAt: Number(r.received_at),
		to: JSON.parse(r.envelope_to_json),
		subject: r.subject ?? '',
		sizeBytes: Number(r.size_bytes),
		from: r.from_header,
		messageId: r.message_id,
		text: r.text_body,
		html: r.html_body,
		attachments: JSON.parse(r.attachments_json)
	};
}

/**
 * The HTML part as a sandboxed frame's document: links open in a new tab (a sandboxed frame may not
 * navigate the admin page). The frame runs no script (no allow-scripts) and has an opaque origin.
 */
export function framedHtml(html: string): string {
	const base = '<base target="_blank">';
	return /<head[^>]*>/i.test(html) ? html.replace(/<head[^>]*>/i, (m) => m + base) : base + html;
}
