/**
 * A digest of a known fab (known-fab.ts), scheduled at the subscriber's 06:30 in Vienna, delivered over
 * real SMTP to the local sink on 127.0.0.1 and read back from the sink's mailbox: flagged chambers,
 * counts, links, the leak reminder, the chart as an inline CID part, the plain-text part and the
 * unsubscribe link.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../../helpers/temp-db.ts';
import { buildKnownFab, PERIOD_FROM, PERIOD_TO } from './known-fab.ts';
import { runDigestSchedule } from '../../../src/lib/server/mail/digest.ts';
import { sendDue } from '../../../src/lib/server/mail/sender.ts';
import { startMailSink, type MailSink } from '../../../src/lib/server/mail/sink.ts';
import { createMailTransport } from '../../../src/lib/server/mail/transport.ts';
import { saveSubscription, defaultInput } from '../../../src/lib/server/mail/subscriptions.ts';
import { verifyUnsubscribeToken } from '../../../src/lib/server/mail/unsubscribe.ts';
import { mailOrigin } from '../../../src/lib/server/mail/env.ts';
import { setClock } from '../../../src/lib/server/time.ts';
import { simpleParser } from 'mailparser';

let env: Awaited<ReturnType<typeof useTempDb>>;
let fab: Awaited<ReturnType<typeof buildKnownFab>>;
let sink: MailSink;
let msg: { subject: string; html_body: string; text_body: string; attachments_json: string; raw: string; envelope_to_json: string };
const origin = mailOrigin();

beforeAll(async () => {
	env = await useTempDb();
	fab = await buildKnownFab(env.k);
	sink = await startMailSink({ k: env.k });
	// Subscribed just after Sunday's 06:30, for area AR1, in Vienna at the default 06:30.
	setClock(PERIOD_FROM + 60_000);
	const r = await saveSubscription(fab.engineer.id, { ...defaultInput({ email: null, timeZone: 'Europe/Vienna' }), email: 'ines@wrenfield.example', areaCodes: ['AR1'] });
	expect(r).toEqual({ ok: true });
	setClock(PERIOD_TO + 60_000);
	const s = await runDigestSchedule();
	expect(s.queued).toHaveLength(1);
	const sent = await sendDue(createMailTransport({ host: '127.0.0.1', port: sink.port, secure: false, user: null, pass: null, from: 'Lockstep <lockstep@wrenfield.example>' }));
	expect(sent.sent).toBe(1);
	msg = await env.k('mail_sink_messages').first();
	if (process.env.LOCKSTEP_DUMP_MAIL) (await import('node:fs')).writeFileSync(process.env.LOCKSTEP_DUMP_MAIL, msg.html_body);
});
afterAll(async () => {
	setClock(null);
	await sink.close();
	await env.cleanup();
});

describe('morning digest over SMTP', () => {
	const openInScope = async () =>
		Number((await env.k('alarms').whereIn('chamber_id', [fab.ch.ch1, fab.ch.ch2, fab.ch.ch3, fab.ch.ch4]).where('state', 'open').count({ n: '*' }).first())!.n);
	it('arrives for the subscriber, covering the day before 06:30 Vienna time', async () => {
		expect(JSON.parse(msg.envelope_to_json)).toEqual(['ines@wrenfield.example']);
		// 06:30 CET = 05:30 UTC in December (Vienna is UTC+1 outside summer time, EU Directive 2000/84/EC).
		expect(msg.text_body).toContain('Sun 6 Dec, 06:30 → Mon 7 Dec, 06:30 (Europe/Vienna)');
		// CH2's old alarm and what the shifted wafers opened on CH1 (the gross rule; the drift rule may too)
		const n = await openInScope();
		expect(n).toBeGreaterThanOrEqual(2);
		expect(msg.subject).toBe(`Lockstep digest Mon 7 Dec: 1 chamber apart from the fleet, ${n} open alarms`);
	});

	it('lists the chamber flagged by fleet matching in the period, and only that one', () => {
		const section = msg.text_body.split('Apart from the fleet')[1].split('Open alarms by age')[0];
		expect(section).toContain('CH3  RCP / main  modified z 6.2  features: f7, f2');
		expect(section).not.toMatch(/CH2|CH4|CH9/);
		expect(msg.html_body).toContain(`href="${origin}/chambers/CH3"`);
	});

	it('lists the open alarms by age, oldest first, with links, and none out of scope', async () => {
		const open = await env.k('alarms').whereIn('chamber_id', [fab.ch.ch1, fab.ch.ch2, fab.ch.ch3, fab.ch.ch4]).where('state', 'open').orderBy(['opened_at', 'id']);
		// the test's two alarms, plus whatever else the shifted wafers opened on CH1 (the EWMA rule may too)
		expect(open.map((a) => a.id)).toEqual(expect.arrayContaining([fab.oldAlarmId, fab.leakAlarmId]));
		const section = msg.text_body.split('Open alarms by age')[1].split('Acknowledged since the last digest')[0];
		// CH2's EWMA alarm is 4 days old; CH1's opened with the shifted wafer 13 h before the period end.
		expect(section).toContain(`under 8 h: 0 · 8–24 h: ${open.length - 1} · 1–3 days: 0 · over 3 days: 1 · acknowledged, not closed: 1`);
		const lines = section.split('\n').filter((l) => l.startsWith('* '));
		expect(lines).toHaveLength(open.length);
		expect(lines[0]).toMatch(/^\* 4\.0 days {2}CH2 {2}RCP \/ main {2}Smoothed drift \(warning\) {2}worst 1\.30 {2}1 wafer$/);
		const leakLine = lines.find((l) => l.includes('Wafer far beyond limit'))!;
		expect(leakLine).toMatch(/^\* 13 h {2}CH1 {2}RCP \/ main {2}Wafer far beyond limit \(alarm\)/);
		expect(leakLine).toMatch(/leading: N₂ 337\.1 nm \d+ %/);
		expect(leakLine).toContain('[leak-like]');
		for (const a of open) expect(section).toContain(`${origin}/alarms/${a.id}\n`);
		expect(msg.html_body).toContain(`href="${origin}/alarms/${fab.oldAlarmId}"`);
		expect(msg.text_body).not.toContain(`/alarms/${fab.outOfScopeAlarmId}\n`);
	});

	it('carries the safety reminder for the leak-like signature, in both parts', () => {
		for (const part of [msg.text_body, msg.html_body]) {
			expect(part).toContain('Lockstep is not a safety system');
			expect(part).toContain('gas detection, interlocks and safety procedures are authoritative');
			expect(part).toContain('nitrogen (air)');
		}
	});

	it('lists the acknowledgement with its cause code and disposition', () => {
		const section = msg.text_body.split('Acknowledged since the last digest')[1].split('Awaiting requalification')[0];
		expect(section).toContain('CH2  Run above warning  cause HW-MFC Mass-flow controller out of calibration or drifting  → Hold recommended  by Ines Engineer  “CF4 MFC reads 3 % high”');
		expect(msg.html_body).toContain(`href="${origin}/alarms/${fab.runAlarmId}"`);
	});

	it('lists the chamber awaiting requalification and the maintenance done in the period only', () => {
		const req = msg.text_body.split('Awaiting requalification')[1].split('Five worst wafer-steps')[0];
		expect(req).toMatch(/\* CH4 {2}since Mon 7 Dec, 02:30 {2}after Wet clean/);
		const maint = msg.text_body.split('Maintenance done')[1].split('Lockstep recommends')[0];
		const lines = maint.split('\n').filter((l) => l.startsWith('* '));
		expect(lines).toEqual(['* Mon 7 Dec, 02:30  CH4  Wet clean  by Ines Engineer  “window and liner wiped”']);
	});

	it('lists the five worst wafer-steps of the period, worst first, with links', async () => {
		const expected = await env
			.k('scores as s')
			.join('wafer_steps as w', 'w.id', 's.wafer_step_id')
			.where('s.current', true)
			.andWhere('s.processed_at', '>', PERIOD_FROM)
			.andWhere('s.processed_at', '<=', PERIOD_TO)
			.orderBy('s.worst_ratio', 'desc')
			.limit(5)
			.select('w.wafer_id', 's.wafer_step_id', 's.worst_ratio');
		expect(expected.slice(0, 2).map((e) => e.wafer_step_id).sort()).toEqual([...fab.shiftedIds].sort());
		const section = msg.text_body.split('Five worst wafer-steps')[1].split('Maintenance done')[0];
		const lines = section.split('\n').filter((l) => l.startsWith('* '));
		expect(lines.map((l) => l.split(' ')[1])).toEqual(expected.map((e) => e.wafer_id));
		expect(lines[0]).toContain(`worst ${Number(expected[0].worst_ratio).toFixed(2)}`);
		for (const e of expected) expect(msg.html_body).toContain(`href="${origin}/wafers/${e.wafer_step_id}"`);
	});

	it('gives the counts of the period in the headline', async () => {
		const inScope = [fab.ch.ch1, fab.ch.ch2, fab.ch.ch3, fab.ch.ch4];
		const opened = await env.k('alarms').whereIn('chamber_id', inScope).andWhere('opened_at', '>', PERIOD_FROM).andWhere('opened_at', '<=', PERIOD_TO).count({ n: '*' }).first();
		// 30 quiet + 2 shifted wafers of CH1 were processed in the period
		expect(msg.text_body).toContain(`32 wafer-steps scored · ${opened!.n} alarms opened · `);
		expect(msg.text_body).toContain(`1 chamber apart from the fleet · ${await openInScope()} open alarms (1 older than 24 h) · 1 acknowledgement · 1 chamber awaiting requalification · 1 maintenance event`);
	});

	it('embeds the chart as an inline SVG part referenced by Content-ID', async () => {
		// multipart/alternative [text, multipart/related [html, svg]] (RFC 2387, RFC 2392)
		expect(msg.raw).toMatch(/Content-Type: multipart\/related; type="text\/html"/);
		expect(msg.raw).toMatch(/Content-Type: image\/svg\+xml; name=worst-ratio\.svg/);
		expect(msg.raw).toMatch(/Content-ID: <worst-ratio-chart@lockstep>/);
		const asSent = await simpleParser(msg.raw, { keepCidLinks: true });
		expect(asSent.html).toContain('src="cid:worst-ratio-chart@lockstep"');
		// the sink resolved the cid: reference for the mailbox view
		expect(msg.html_body).toMatch(/src="data:image\/svg\+xml;base64,/);
		const svg = Buffer.from(/src="data:image\/svg\+xml;base64,([^"]+)"/.exec(msg.html_body)![1], 'base64').toString('utf8');
		expect(svg.startsWith('<svg')).toBe(true);
		expect(svg).toContain('limit');
		const atts = JSON.parse(msg.attachments_json);
		expect(atts).toEqual([expect.objectContaining({ contentType: 'image/svg+xml', cid: 'worst-ratio-chart@lockstep' })]);
	});

	it('carries a signed unsubscribe link that names the user and the digest', async () => {
		const url = /Unsubscribe: (\S+)/.exec(msg.text_body)![1];
		expect(url.startsWith(`${origin}/unsubscribe?token=`)).toBe(true);
		const token = decodeURIComponent(new URL(url).searchParams.get('token')!);
		expect(await verifyUnsubscribeToken(token)).toEqual({ ok: true, userId: fab.engineer.id, scope: 'digest' });
		expect(msg.raw).toMatch(/List-Unsubscribe:\s+<http/);
		// One changed character breaks the signature.
		const forged = token.slice(0, -1) + (token.endsWith('A') ? 'B' : 'A');
		expect((await verifyUnsubscribeToken(forged)).ok).toBe(false);
	});

	it('is not queued twice for the same period, even when the schedule runs again', async () => {
		setClock(PERIOD_TO + 10 * 60_000);
		expect((await runDigestSchedule()).queued).toHaveLength(0);
		// Even with the mark wiped (as after restoring an old backup), the dedupe key holds.
		await env.k('mail_subscriptions').update({ last_digest_period_end: PERIOD_FROM });
		expect((await runDigestSchedule()).queued).toHaveLength(0);
		expect(await env.k('mail_outbox').where({ kind: 'digest' }).count({ n: '*' }).first()).toEqual({ n: 1 });
	});
});
