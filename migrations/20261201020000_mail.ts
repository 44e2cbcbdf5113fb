/**
 * Mail: what the outbox needs to deliver exactly once, what subscriptions need to schedule digests,
 * weekly summaries and grouped alarm mails, and the local sink's mailbox.
 *
 * Columns are added, never changed, so a database from the foundation migration keeps its rows.
 */
import type { Knex } from 'knex';

export async function up(knex: Knex): Promise<void> {
	await knex.schema.alterTable('mail_outbox', (t) => {
		// Who the mail is for (digests, alarm mails); null for mails to an address only.
		t.string('user_id', 40);
		// The Message-ID header, fixed when the row is queued: a retry after a crash in mid-send carries
		// the same id, so a receiving system can recognise the repeat (RFC 5322 §3.6.4).
		t.string('message_id', 200);
		// A sender claims a row by writing its token; only the holder of the token records the outcome.
		t.string('claim_token', 64);
		t.bigInteger('claimed_at');
		// Inline parts (the digest's chart): [{ cid, filename, contentType, content (utf-8) }]
		t.text('attachments_json');
		t.text('headers_json');
		t.index(['user_id', 'created_at']);
	});
	await knex.schema.alterTable('mail_subscriptions', (t) => {
		t.bigInteger('last_weekly_period_end');
		// Alarm mails: the last alarm_actions id already mailed to this subscriber, and when the last one went.
		t.integer('alarm_cursor');
		t.bigInteger('last_alarm_mail_at');
	});
	await knex.schema.createTable('mail_sink_messages', (t) => {
		t.increments('id');
		t.bigInteger('received_at').notNullable();
		t.string('envelope_from', 254);
		t.text('envelope_to_json').notNullable();
		t.string('message_id', 200);
		t.string('subject', 300);
		t.string('from_header', 300);
		t.string('to_header', 1000);
		t.text('text_body');
		// The HTML part with cid: references turned into data: URIs, ready to show in a sandboxed frame.
		t.text('html_body');
		t.text('attachments_json').notNullable(); // [{ filename, contentType, cid, size }]
		t.integer('size_bytes').notNullable();
		t.text('raw').notNullable();
		t.index(['received_at']);
		t.index(['message_id']);
	});
}

export async function down(knex: Knex): Promise<void> {
	await knex.schema.dropTableIfExists('mail_sink_messages');
	await knex.schema.alterTable('mail_subscriptions', (t) => {
		t.dropColumn('last_weekly_period_end');
		t.dropColumn('alarm_cursor');
		t.dropColumn('last_alarm_mail_at');
	});
	await knex.schema.alterTable('mail_outbox', (t) => {
		t.dropIndex(['user_id', 'created_at']);
		t.dropColumn('user_id');
		t.dropColumn('message_id');
		t.dropColumn('claim_token');
		t.dropColumn('claimed_at');
		t.dropColumn('attachments_json');
		t.dropColumn('headers_json');
	});
}
