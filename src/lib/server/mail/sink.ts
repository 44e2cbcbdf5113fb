/**
 * The local SMTP sink: an SMTP server on 127.0.0.1 (smtp-server) that accepts every message, parses it
 * (mailparser) and stores it in `mail_sink_messages`, so the admin mailbox shows what users would have
 * received. It stands in for the fab's relay in development, the demo and tests; it never relays.
 *
 * STARTTLS is disabled: smtp-server's bundled certificate has expired, and the sink only listens on
 * the loopback interface. Any AUTH is accepted (a development relay may be configured with a user).
 * Recipients in the `.invalid` top-level domain (reserved as never resolvable, RFC 2606 §2) are refused
 * with 550, as a real relay refuses an unknown domain — so a permanent failure can be seen end to end.
 */
import type { Knex } from 'knex';
import type { AddressInfo } from 'node:net';
import { simpleParser, type AddressObject } from 'mailparser';
import { SMTPServer } from 'smtp-server';
import { db } from '../db.ts';
import { now } from '../time.ts';

export interface MailSink {
	port: number;
	close(): Promise<void>;
}

const MAX_BYTES = 10 * 1024 * 1024;

function addressText(a: AddressObject | AddressObject[] | undefined): string | null {
	if (!a) return null;
	return (Array.isArray(a) ? a.map((x) => x.text).join(', ') : a.text).slice(0, 1000);
}

/**
 * Turn the remaining `cid:` image references into data: URIs. simpleParser does this itself only for
 * types matching image/<word> and so leaves image/svg+xml (the digest's chart) as a cid: link.
 */
export function inlineCidImages(html: string, attachments: { cid?: string; contentType: string; content: Buffer }[]): string {
	return html.replace(/\bcid:([^'"\s)]{1,256})/g, (m, cid: string) => {
		const a = attachments.find((x) => x.cid === cid && /^image\//i.test(x.contentType));
		return a ? `data:${a.contentType};base64,${a.content.toString('base64')}` : m;
	});
}

/** Parse one received message and store it. Exported for the tests of what the mailbox shows. */
export async function storeReceived(raw: Buffer, envelope: { from: string | null; to: string[] }, k: Knex = db()): Promise<number> {
	// The stored HTML has its cid: images as data: URIs, so the mailbox shows the inline chart as the
	// recipient's client would.
	const parsed = await simpleParser(raw);
	const html = typeof parsed.html === 'string' ? inlineCidImages(parsed.html, parsed.attachments) : null;
	const [row] = await k('mail_sink_messages')
		.insert({
			received_at: now(),
			envelope_from: envelope.from,
			envelope_to_json: JSON.stringify(envelope.to),
			message_id: parsed.messageId ?? null,
			subject: (parsed.subject ?? '').slice(0, 300),
			from_header: addressText(parsed.from)?.slice(0, 300) ?? null,
			to_header: addressText(parsed.to),
			text_body: parsed.text ?? null,
			html_body: html,
			attachments_json: JSON.stringify(parsed.attachments.map((a) => ({ filename: a.filename ?? null, contentType: a.contentType, cid: a.cid ?? null, size: a.size }))),
			size_bytes: raw.length,
			raw: raw.toString('utf8')
		})
		.returning('id');
	return typeof row === 'object' ? row.id : row;
}

export function startMailSink(opts: { port?: number; host?: string; k?: Knex; log?: (s: string) => void } = {}): Promise<MailSink> {
	const host = opts.host ?? '127.0.0.1';
	const log = opts.log ?? (() => {});
	const server = new SMTPServer({
		disabledCommands: ['STARTTLS'],
		authOptional: true,
		size: MAX_BYTES,
		banner: 'Lockstep local mail sink (stores messages, relays nothing)',
		logger: false,
		onAuth(_auth, _session, cb) {
			cb(null, { user: 'sink' });
		},
		onRcptTo(address, _session, cb) {
			if (/\.invalid$/i.test(address.address)) {
				const err = new Error(`5.1.2 No such domain: ${address.address}`) as Error & { responseCode: number };
				err.responseCode = 550;
				return cb(err);
			}
			cb();
		},
		onData(stream, session, cb) {
			const chunks: Buffer[] = [];
			stream.on('data', (c: Buffer) => chunks.push(c));
			stream.on('end', () => {
				if ((stream as unknown as { sizeExceeded?: boolean }).sizeExceeded) {
					const err = new Error('Message exceeds the sink’s 10 MB limit') as Error & { responseCode: number };
					err.responseCode = 552;
					return cb(err);
				}
				const envelope = {
					from: session.envelope.mailFrom ? session.envelope.mailFrom.address : null,
					to: session.envelope.rcptTo.map((r) => r.address)
				};
				// Answer 250 only once the message is stored: a message the sink could not keep is refused
				// (451, try again later), so the sender retries instead of believing it delivered.
				storeReceived(Buffer.concat(chunks), envelope, opts.k ?? db())
					.then((id) => {
						log(`mail sink: stored message ${id} for ${envelope.to.join(', ')}`);
						cb();
					})
					.catch((e) => {
						log(`mail sink: could not store a message: ${e instanceof Error ? e.message : e}`);
						const err = new Error('The sink could not store the message') as Error & { responseCode: number };
						err.responseCode = 451;
						cb(err);
					});
			});
		}
	});
	return new Promise((resolve, reject) => {
		server.once('error', reject);
		server.listen(opts.port ?? 0, host, () => {
			server.off('error', reject);
			server.on('error', (e) => log(`mail sink: ${e.message}`));
			const port = (server.server.address() as AddressInfo).port;
			resolve({
				port,
				close: () => new Promise<void>((r) => server.close(() => r()))
			});
		});
	});
}
