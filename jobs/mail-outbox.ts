/**
 * The outbox sender job: delivers due mails over SMTP (see src/lib/server/mail/sender.ts). In the
 * jobs process it first makes sure the local SMTP sink is listening when this installation uses it
 * (SMTP_HOST unset or loopback, LOCKSTEP_MAIL_SINK not `off`): development and the demo then keep every
 * mail in the admin mailbox instead of sending it anywhere.
 */
import { config } from '../src/lib/server/config.ts';
import { sinkWanted } from '../src/lib/server/mail/env.ts';
import { sendDue, type SendReport } from '../src/lib/server/mail/sender.ts';
import { startMailSink, type MailSink } from '../src/lib/server/mail/sink.ts';
import { createMailTransport } from '../src/lib/server/mail/transport.ts';

let sink: Promise<MailSink | null> | null = null;

/** Start the local sink once per process on the SMTP port (a failure is logged and retried next tick). */
export function ensureMailSink(): Promise<MailSink | null> {
	if (!sinkWanted()) return Promise.resolve(null);
	sink ??= startMailSink({ port: config.smtp.port, host: '127.0.0.1', log: (s) => console.log(s) })
		.then((s) => {
			console.log(`jobs: local mail sink listening on 127.0.0.1:${s.port} (mail is kept in the admin mailbox, not sent)`);
			return s;
		})
		.catch((e) => {
			console.error(`jobs: the local mail sink could not listen on 127.0.0.1:${config.smtp.port}: ${e instanceof Error ? e.message : e}`);
			sink = null;
			return null;
		});
	return sink;
}

export async function closeMailSink(): Promise<void> {
	const s = await sink;
	sink = null;
	await s?.close();
}

const transport = createMailTransport();

export async function runOutbox(): Promise<SendReport> {
	await ensureMailSink();
	const r = await sendDue(transport);
	if (r.claimed || r.recovered) console.log(`mail: ${r.sent} sent, ${r.retrying} to retry, ${r.failed} failed${r.recovered ? `, ${r.recovered} taken back after an interrupted send` : ''}`);
	return r;
}
