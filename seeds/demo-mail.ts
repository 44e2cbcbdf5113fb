/**
 * Mail subscriptions for the demo people (invented addresses under wrenfield.example, in the reserved
 * .example top-level domain, RFC 2606 §2): a mix of scopes, zones and kinds of mail, so the admin mailbox has
 * something to show once "send digest now" or the 06:30 schedule runs. Uses the same validation as the
 * settings page; a person missing from the database is skipped.
 */
import type { Knex } from 'knex';
import { defaultInput, saveSubscription, type SubscriptionInput } from '../src/lib/server/mail/subscriptions.ts';

const PLAN: { username: string; input: Partial<SubscriptionInput> }[] = [
	{ username: 'hlindqvist', input: { alarmMails: true, alarmMinSeverity: 'alarm', weeklySummary: true } },
	{ username: 'dokafor', input: { areaCodes: ['DE'], alarmMails: true, alarmMinSeverity: 'warning' } },
	{ username: 'mtanaka', input: { areaCodes: ['CE'], alarmMails: true, alarmMinSeverity: 'alarm', digestTime: '07:00' } },
	{ username: 'rduarte', input: { chamberCodes: ['DE03-A', 'CE01-C', 'CE03-A'], digestEnabled: true } },
	{ username: 'sbrenner', input: { weeklySummary: true } },
	// a yield engineer at a sister site reads the same fab's digest at 06:30 in her own zone
	{ username: 'kmensah', input: { timeZone: 'Asia/Singapore', areaCodes: ['DE', 'CE'] } }
];

export async function seedDemoMail(k: Knex, log: (s: string) => void = () => {}): Promise<number> {
	let n = 0;
	for (const p of PLAN) {
		const user = await k('users').where({ username: p.username }).first('id', 'time_zone', 'email');
		if (!user) continue;
		const input = { ...defaultInput({ email: user.email, timeZone: user.time_zone }), email: `${p.username}@wrenfield.example`, ...p.input };
		const r = await saveSubscription(user.id, input, k);
		if (!r.ok) throw new Error(`demo mail subscription for ${p.username}: ${JSON.stringify(r.errors)}`);
		n++;
	}
	log(`Mail: ${n} demo people subscribed (digests at 06:30 in their zones; alarm mails for 3); read them under Mailbox.`);
	return n;
}
