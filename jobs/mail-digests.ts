/**
 * The mail scheduler job, every minute: queues the digests and weekly summaries that have come due in
 * each subscriber's time zone, and the alarm mails (grouped per the mail policy). Queued mail goes out
 * with the outbox job (mail-outbox.ts).
 */
import { runAlarmMails } from '../src/lib/server/mail/alarm-mail.ts';
import { runDigestSchedule } from '../src/lib/server/mail/digest.ts';

export async function runMailSchedule(): Promise<{ digests: number; alarmMails: number }> {
	const d = await runDigestSchedule();
	const a = await runAlarmMails();
	if (d.queued.length || a.queued.length) console.log(`mail: ${d.queued.length} digest(s) and ${a.queued.length} alarm mail(s) queued`);
	return { digests: d.queued.length, alarmMails: a.queued.length };
}
