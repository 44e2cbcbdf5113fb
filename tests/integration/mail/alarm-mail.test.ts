/**
 * Alarm mails over SMTP: one mail when an alarm opens, none for an extension, alarms that open within
 * the grouping window (mail policy, 15 min here) go together in the next mail, severity and scope
 * filters, and a restart in between repeats nothing.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../../helpers/temp-db.ts';
import { createFab } from '../../helpers/fab.ts';
import { closeAlarm, raiseOrExtend, type AlarmRule } from '../../../src/lib/server/alarms.ts';
import { runAlarmMails } from '../../../src/lib/server/mail/alarm-mail.ts';
import { putMailPolicy } from '../../../src/lib/server/mail/policy.ts';
import { sendDue } from '../../../src/lib/server/mail/sender.ts';
import { startMailSink, type MailSink } from '../../../src/lib/server/mail/sink.ts';
import { createMailTransport } from '../../../src/lib/server/mail/transport.ts';
import { defaultInput, saveSubscription } from '../../../src/lib/server/mail/subscriptions.ts';
import { mailOrigin } from '../../../src/lib/server/mail/env.ts';
import { setClock } from '../../../src/lib/server/time.ts';
import { createUser } from '../../../src/lib/server/users.ts';

let env: Awaited<ReturnType<typeof useTempDb>>;
let fab: Awaited<ReturnType<typeof createFab>>;
let sink: MailSink;
let alice: string; // alarms of severity "alarm" and up, whole fab
let bob: string; // warnings too, chamber CH2 only
const T0 = Date.UTC(2026, 11, 8, 9, 0);
const MIN = 60_000;

async function open(chamber: number, rule: AlarmRule, at: number, ratio = 2) {
	setClock(at);
	return raiseOrExtend(env.k, { chamberId: fab.chamberIds[chamber], recipeStepId: fab.recipeStepId, baselineId: null, rule, waferStepId: null, at, ratio, detail: {} });
}
async function deliver(at: number) {
	setClock(at);
	const r = await runAlarmMails(at);
	await sendDue(createMailTransport({ host: '127.0.0.1', port: sink.port, secure: false, user: null, pass: null, from: 'Lockstep <lockstep@wrenfield.example>' }), { at: at + MIN / 2 });
	return r;
}
const inbox = async (to: string) =>
	(await env.k('mail_sink_messages').orderBy('id').select('envelope_to_json', 'subject', 'text_body')).filter((m) => JSON.parse(m.envelope_to_json).includes(to));

beforeAll(async () => {
	env = await useTempDb();
	fab = await createFab(env.k, { chambers: 3, features: 4 });
	sink = await startMailSink({ k: env.k });
	setClock(T0 - 60 * MIN);
	alice = (await createUser({ username: 'alice', displayName: 'Alice', password: 'alice-password', role: 'engineer' })).id;
	bob = (await createUser({ username: 'bob', displayName: 'Bob', password: 'bob-password-1', role: 'viewer' })).id;
	// an alarm that opened before anyone subscribed: never mailed after the fact (closed again below,
	// so that CH3 can open a new one)
	const early = await open(2, 'single', T0 - 50 * MIN);
	setClock(T0 - 40 * MIN);
	expect(await putMailPolicy({ alarmGroupMinutes: 15 }, null)).toMatchObject({ ok: true });
	const base = defaultInput({ email: null, timeZone: 'UTC' });
	expect(await saveSubscription(alice, { ...base, email: 'alice@wrenfield.example', alarmMails: true, alarmMinSeverity: 'alarm', digestEnabled: false })).toEqual({ ok: true });
	expect(await saveSubscription(bob, { ...base, email: 'bob@wrenfield.example', alarmMails: true, alarmMinSeverity: 'warning', chamberCodes: ['CH2'], digestEnabled: false })).toEqual({ ok: true });
	await closeAlarm(env.k, { alarmId: early.id, userId: alice, comment: 'before the test' });
});
afterAll(async () => {
	setClock(null);
	await sink.close();
	await env.cleanup();
});

describe('alarm mails', () => {
	let first: number;
	it('mails one alarm when it opens', async () => {
		first = (await open(0, 'single', T0)).id;
		const r = await deliver(T0 + MIN);
		expect(r.queued.map((q) => [q.userId, q.alarms])).toEqual([[alice, 1]]);
		const mails = await inbox('alice@wrenfield.example');
		expect(mails).toHaveLength(1);
		expect(mails[0].subject).toBe('Lockstep alarm: CH1 Wafer far beyond limit (worst ratio 2.00)');
		expect(mails[0].text_body).toContain(`${mailOrigin()}/alarms/${first}`);
		expect(mails[0].text_body).toContain('Lockstep recommends and records; it never acts on a tool.');
		expect(mails[0].text_body).not.toContain('CH3'); // the alarm from before the subscription
	});

	it('sends nothing for an extension of the live alarm', async () => {
		const ext = await open(0, 'single', T0 + 20 * MIN, 5);
		expect(ext).toEqual({ id: first, opened: false });
		const r = await deliver(T0 + 21 * MIN);
		expect(r.queued).toEqual([]);
		expect(await inbox('alice@wrenfield.example')).toHaveLength(1);
	});

	it('groups the alarms that open within the window into one mail after it', async () => {
		// The last mail went at T0+1 min: alarms opening until T0+16 min wait.
		const a = await open(1, 'single', T0 + 22 * MIN);
		await deliver(T0 + 22 * MIN); // mailed at once: the window after the first mail is over
		const b = await open(1, 'ewma', T0 + 24 * MIN); // warning: Bob only
		const c = await open(2, 'single', T0 + 25 * MIN);
		const d = await open(0, 'run', T0 + 26 * MIN); // warning, CH1: nobody
		const waitA = await deliver(T0 + 27 * MIN);
		expect(waitA.queued).toEqual([]);
		expect(waitA.waiting).toBe(2); // both were mailed at T0+22: Alice waits with c, Bob with b
		const e = await open(1, 'run', T0 + 30 * MIN); // warning on CH2: Bob
		const wait2 = await deliver(T0 + 36 * MIN);
		expect(wait2.queued).toEqual([]);
		// 15 minutes after T0+22: one mail each with everything that waited.
		const r = await deliver(T0 + 37 * MIN);
		expect(Object.fromEntries(r.queued.map((q) => [q.userId, q.alarms]))).toEqual({ [alice]: 1, [bob]: 2 });
		expect(r.queued).toHaveLength(2);
		const aliceMails = await inbox('alice@wrenfield.example');
		expect(aliceMails.map((m) => m.subject)).toEqual([
			'Lockstep alarm: CH1 Wafer far beyond limit (worst ratio 2.00)',
			'Lockstep alarm: CH2 Wafer far beyond limit (worst ratio 2.00)',
			'Lockstep alarm: CH3 Wafer far beyond limit (worst ratio 2.00)'
		]);
		const bobMails = await inbox('bob@wrenfield.example');
		expect(bobMails.map((m) => m.subject)).toEqual(['Lockstep alarm: CH2 Wafer far beyond limit (worst ratio 2.00)', 'Lockstep: 2 alarms opened on CH2']);
		const grouped = bobMails[1].text_body;
		for (const id of [b.id, e.id]) expect(grouped).toContain(`${mailOrigin()}/alarms/${id}`);
		expect(grouped).toContain('Smoothed drift (warning)');
		expect(grouped).toContain('Run above warning (warning)');
		expect(grouped.indexOf(`/alarms/${b.id}`)).toBeLessThan(grouped.indexOf(`/alarms/${e.id}`));
		for (const m of [...aliceMails, ...bobMails]) {
			expect(m.text_body).not.toContain(`/alarms/${d.id}\n`);
		}
		expect(aliceMails[1].text_body).toContain(`/alarms/${a.id}`);
		expect(aliceMails[2].text_body).toContain(`/alarms/${c.id}`);
	});

	it('repeats nothing when the job runs again or restarts', async () => {
		const before = Number((await env.k('mail_sink_messages').count({ n: '*' }).first())!.n);
		await deliver(T0 + 90 * MIN);
		await deliver(T0 + 91 * MIN);
		expect(Number((await env.k('mail_sink_messages').count({ n: '*' }).first())!.n)).toBe(before);
	});

	it('carries the leak reminder when an alarm’s leading lines are N₂ or He', async () => {
		await env.k('features').where({ recipe_step_id: fab.recipeStepId, position: 0 }).update({ name: 'oes_587.6' });
		await env.k('features').where({ recipe_step_id: fab.recipeStepId, position: 1 }).update({ name: 'oes_667.8' });
		const f = await open(1, 'fleet', T0 + 120 * MIN);
		// two distinct He lines named by the fleet's FDR control, both above the fleet (the leak rule)
		const separatingDetail = [{ feature: 'oes_587.6', z: 7.5 }, { feature: 'oes_667.8', z: 5.1 }];
		await env.k('alarms').where({ id: f.id }).update({ detail_json: JSON.stringify({ separating: ['oes_587.6', 'oes_667.8'], separatingDetail }) });
		await deliver(T0 + 121 * MIN);
		const last = (await inbox('bob@wrenfield.example')).at(-1)!;
		expect(last.subject).toBe('Lockstep alarm: CH2 Apart from fleet (worst ratio 2.00)');
		expect(last.text_body).toContain('Leak-like signature — Lockstep is not a safety system');
		expect(last.text_body).toContain('Lines of helium lead');
		expect(last.text_body).toContain('gas detection, interlocks and safety procedures are authoritative');
		expect(last.text_body).toContain('leading features: He I 587.6 nm, He I 667.8 nm — apart from the fleet');
	});
});
