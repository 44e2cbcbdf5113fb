/**
 * The outbox over real SMTP to the local sink on 127.0.0.1: the dedupe key, an outage (sink stopped,
 * mails queued, retries with backoff, sink restarted: every mail arrives exactly once), permanent
 * failures, two senders racing, and a row left in `sending` by a dead process.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../../helpers/temp-db.ts';
import { enqueueMail } from '../../../src/lib/server/mail/outbox.ts';
import { sendDue, SENDING_LEASE_MS } from '../../../src/lib/server/mail/sender.ts';
import { startMailSink, type MailSink } from '../../../src/lib/server/mail/sink.ts';
import { createMailTransport } from '../../../src/lib/server/mail/transport.ts';
import { MailPolicy, retryDelayMs } from '../../../src/lib/server/mail/policy.ts';
import { now, setClock } from '../../../src/lib/server/time.ts';

let env: Awaited<ReturnType<typeof useTempDb>>;
const T0 = Date.UTC(2026, 11, 7, 5, 0);
const policy = MailPolicy.parse({ maxAttempts: 5, backoffSeconds: 30 });
const smtp = (port: number) => ({ host: '127.0.0.1', port, secure: false, user: null, pass: null, from: 'Lockstep <lockstep@wrenfield.example>' });
const transportTo = (port: number) => createMailTransport(smtp(port), { connectMs: 2000, socketMs: 5000 });
const mail = (i: number, key: string | null = `test:${i}`) => ({
	kind: 'test' as const,
	to: `person${i}@wrenfield.example`,
	userId: null,
	subject: `Test mail ${i}`,
	text: `Body ${i}`,
	html: `<p>Body ${i}</p>`,
	dedupeKey: key
});

beforeAll(async () => {
	env = await useTempDb();
	setClock(T0);
});
afterAll(async () => {
	setClock(null);
	await env.cleanup();
});

describe('outbox', () => {
	it('queues a mail once per dedupe key', async () => {
		const a = await enqueueMail(mail(0, 'digest:u1:2026-12-07T05:30Z'));
		const b = await enqueueMail({ ...mail(0, 'digest:u1:2026-12-07T05:30Z'), subject: 'a second try' });
		expect(a.created).toBe(true);
		expect(b).toEqual({ id: a.id, created: false });
		expect(await env.k('mail_outbox').where({ dedupe_key: 'digest:u1:2026-12-07T05:30Z' }).pluck('subject')).toEqual(['Test mail 0']);
		await env.k('mail_outbox').del();
	});

	it('survives an outage: stop the sink, queue mails, retry with backoff, restart, each arrives exactly once', async () => {
		// Find a free port by starting the sink, then stop it: the relay is "down".
		let sink: MailSink = await startMailSink({ k: env.k });
		const port = sink.port;
		await sink.close();
		const ids: number[] = [];
		for (let i = 1; i <= 6; i++) ids.push((await enqueueMail(mail(i))).id);
		const t = transportTo(port);

		let at = now();
		const first = await sendDue(t, { at, policy });
		expect(first.sent).toBe(0);
		expect(first.retrying).toBe(6);
		let rows = await env.k('mail_outbox').whereIn('id', ids).orderBy('id');
		expect(rows.every((r) => r.state === 'queued')).toBe(true);
		// The first row spent an attempt and names the refusal; the rest waited without spending one.
		expect(rows[0].attempts).toBe(1);
		expect(rows[0].last_error).toMatch(/ECONNREFUSED|ECONNECTION/);
		expect(rows.every((r) => Number(r.next_attempt_at) === at + retryDelayMs(1, policy))).toBe(true);

		// Not due yet: nothing is tried before the backoff has passed.
		expect((await sendDue(t, { at: at + 1000, policy })).claimed).toBe(0);
		at += retryDelayMs(1, policy);
		const second = await sendDue(t, { at, policy });
		expect(second.sent).toBe(0);
		rows = await env.k('mail_outbox').whereIn('id', ids).orderBy('id');
		expect(rows[0].attempts).toBe(2);
		// Exponential: 30 s after the first failure, 60 s after the second.
		expect(Number(rows[0].next_attempt_at) - at).toBe(60_000);

		sink = await startMailSink({ k: env.k, port });
		try {
			at += 60_000;
			const third = await sendDue(t, { at, policy });
			expect(third.sent).toBe(6);
			// A later run finds nothing to send: no mail goes twice.
			at += 3_600_000;
			expect((await sendDue(t, { at, policy })).claimed).toBe(0);
		} finally {
			await sink.close();
		}
		rows = await env.k('mail_outbox').whereIn('id', ids).orderBy('id');
		expect(rows.map((r) => r.state)).toEqual(Array(6).fill('sent'));
		const received = await env.k('mail_sink_messages').select('message_id', 'subject', 'envelope_to_json');
		expect(received).toHaveLength(6);
		// Each outbox row's Message-ID arrived exactly once.
		for (const r of rows) expect(received.filter((m) => m.message_id === r.message_id)).toHaveLength(1);
		expect(received.map((m) => m.subject).sort()).toEqual([1, 2, 3, 4, 5, 6].map((i) => `Test mail ${i}`));
	});

	it('records a mail as failed after the last attempt, with the error', async () => {
		await env.k('mail_outbox').del();
		const { id } = await enqueueMail(mail(10));
		const t = transportTo(1); // nothing listens on port 1
		let at = now();
		for (let i = 0; i < policy.maxAttempts; i++) {
			await sendDue(t, { at, policy });
			at += retryDelayMs(i + 1, policy);
		}
		const row = await env.k('mail_outbox').where({ id }).first();
		expect(row.state).toBe('failed');
		expect(row.attempts).toBe(policy.maxAttempts);
		expect(row.last_error).toMatch(/^gave up after 5 attempts: /);
		expect((await sendDue(t, { at: at + 86_400_000, policy })).claimed).toBe(0);
	});

	it('fails a mail at once on a permanent (5xx) refusal', async () => {
		await env.k('mail_outbox').del();
		const sink = await startMailSink({ k: env.k });
		try {
			// The sink refuses the reserved .invalid domain with 550 (RFC 2606 §2), as a relay would.
			const { id } = await enqueueMail({ ...mail(11), to: 'nobody@fab.invalid' });
			const r = await sendDue(transportTo(sink.port), { at: now(), policy });
			const row = await env.k('mail_outbox').where({ id }).first();
			expect(r).toMatchObject({ sent: 0, failed: 1, retrying: 0 });
			expect(row.state).toBe('failed');
			expect(row.attempts).toBe(1);
			expect(row.last_error).toMatch(/550/);
		} finally {
			await sink.close();
		}
	});

	it('lets two senders race without sending a row twice', async () => {
		await env.k('mail_outbox').del();
		await env.k('mail_sink_messages').del();
		const sink = await startMailSink({ k: env.k });
		try {
			for (let i = 20; i < 30; i++) await enqueueMail(mail(i));
			const [a, b] = await Promise.all([
				sendDue(transportTo(sink.port), { at: now(), policy, batch: 10 }),
				sendDue(transportTo(sink.port), { at: now(), policy, batch: 10 })
			]);
			expect(a.sent + b.sent).toBe(10);
			expect(Math.min(a.claimed, b.claimed)).toBe(0);
			expect(await env.k('mail_sink_messages').count({ n: '*' }).first()).toEqual({ n: 10 });
		} finally {
			await sink.close();
		}
	});

	it('takes back a row left in "sending" by a dead process after the lease, and not before', async () => {
		await env.k('mail_outbox').del();
		await env.k('mail_sink_messages').del();
		const { id } = await enqueueMail(mail(40));
		await env.k('mail_outbox').where({ id }).update({ state: 'sending', claim_token: 'dead-process', claimed_at: T0 });
		const sink = await startMailSink({ k: env.k });
		try {
			expect((await sendDue(transportTo(sink.port), { at: T0 + 60_000, policy })).claimed).toBe(0);
			const r = await sendDue(transportTo(sink.port), { at: T0 + SENDING_LEASE_MS + 1, policy });
			expect(r.recovered).toBe(1);
			expect(r.sent).toBe(1);
			const row = await env.k('mail_outbox').where({ id }).first();
			const got = await env.k('mail_sink_messages').first('message_id');
			expect(got.message_id).toBe(row.message_id);
		} finally {
			await sink.close();
		}
	});
});
