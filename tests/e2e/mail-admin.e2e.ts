/**
 * "Send digest now" on the admin page, delivered over SMTP to a sink on 127.0.0.1 writing into the
 * server's database, then read in the admin mailbox in a browser: the list, the HTML part in its
 * sandboxed frame (with the inline chart) and the text part.
 */
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import type { Knex } from 'knex';
import { openDb } from '../../src/lib/server/db.ts';
import { unsubscribeToken } from '../../src/lib/server/mail/unsubscribe.ts';
import { sendDue } from '../../src/lib/server/mail/sender.ts';
import { startMailSink, type MailSink } from '../../src/lib/server/mail/sink.ts';
import { createMailTransport } from '../../src/lib/server/mail/transport.ts';
import { launch, screenshot, signInPage } from './browser.ts';
import { TEST_PASSWORD } from './global-setup.ts';
import { base, request, signIn } from './http.ts';

let k: Knex;
let sink: MailSink;
let adminId: string;

beforeAll(async () => {
	k = openDb({ client: 'better-sqlite3', filename: path.join(inject('dataDir'), 'lockstep.sqlite'), connectionString: null });
	sink = await startMailSink({ k });
	adminId = (await k('users').where({ username: 'e2e-admin' }).first('id')).id;
});
afterAll(async () => {
	await sink.close();
	await k.destroy();
});

describe('admin mail page', () => {
	let outboxId: number;
	it('queues a digest for a person and period, once', async () => {
		const cookie = await signIn('admin');
		const save = await request('/account/mail?/save', {
			cookie,
			form: { user: 'e2e-admin', email: 'admin@wrenfield.example', digestEnabled: 'on', digestTime: '06:30', timeZone: 'Europe/Vienna', alarmMinSeverity: 'alarm' }
		});
		expect(save.status).toBe(200);
		const bad = await request('/admin/mail?/send', { cookie, form: { userId: adminId, kind: 'digest', period: 'custom', from: '2026-12-07T06:30', to: 'yesterday' } });
		expect(bad.status).toBe(400);
		expect(await bad.text()).toContain('Give the end as a date and time');
		const r = await request('/admin/mail?/send', { cookie, form: { userId: adminId, kind: 'digest', period: '7d' } });
		expect(r.status).toBe(200);
		expect(await r.text()).toMatch(/Queued as mail #\d+/);
		const rows = await k('mail_outbox').where({ user_id: adminId, kind: 'digest' });
		expect(rows).toHaveLength(1);
		outboxId = rows[0].id;
		expect(rows[0].subject).toMatch(/^Lockstep digest .*: \d+ chambers? apart from the fleet, \d+ open alarms?$/);
	});

	it('delivers it over SMTP to the sink, and the mailbox shows both parts', async () => {
		// The server tried its own SMTP setting (127.0.0.1:2525) at once. Whatever happened there, hand
		// the row to this test's sink: queue it again if it went elsewhere, then deliver when due.
		await k('mail_outbox').where({ id: outboxId }).update({ state: 'queued', next_attempt_at: 0, claim_token: null });
		const r = await sendDue(createMailTransport({ host: '127.0.0.1', port: sink.port, secure: false, user: null, pass: null, from: 'Lockstep <lockstep@wrenfield.example>' }, { connectMs: 3000, socketMs: 10_000 }), { at: Date.now() + 3_600_000 }, k);
		expect(r.sent).toBeGreaterThanOrEqual(1);
		const msg = await k('mail_sink_messages').whereRaw("envelope_to_json like '%admin@wrenfield.example%'").orderBy('id', 'desc').first();
		expect(msg).toBeTruthy();
		const cookie = await signIn('admin');
		const list = await request('/admin/mail', { cookie });
		expect(await list.text()).toContain(msg.subject.replace(/&/g, '&amp;'));

		const browser = await launch();
		try {
			const page = await browser.newPage({ viewport: { width: 1440, height: 1100 } });
			await signInPage(page, base(), 'e2e-admin', TEST_PASSWORD);
			await page.waitForURL(`${base()}/`);
			await page.goto(`${base()}/admin/mail?message=${msg.id}#message`);
			await expect.poll(() => page.getByTestId('message-subject').textContent()).toBe(msg.subject);
			const frame = page.frameLocator('[data-testid="message-html"]');
			await expect.poll(() => frame.getByText('Morning digest').first().isVisible()).toBe(true);
			await expect.poll(() => frame.getByText('Open alarms by age').isVisible()).toBe(true);
			// the chart arrived as an inline part and shows as an image inside the frame
			const img = frame.locator('img[alt^="Line chart"]');
			await expect.poll(() => img.evaluate((el) => (el as HTMLImageElement).naturalWidth)).toBeGreaterThan(0);
			expect(await page.getByTestId('message-html').getAttribute('sandbox')).toBe('allow-popups allow-popups-to-escape-sandbox');
			await page.getByTestId('message-html').scrollIntoViewIfNeeded();
			await screenshot(page, 'mail-admin-mailbox');
			await page.getByRole('tab', { name: 'Text part' }).click();
			await expect.poll(() => page.getByTestId('message-text').textContent()).toContain('Five worst wafer-steps');
			await screenshot(page, 'mail-admin-text-part');
		} finally {
			await browser.close();
		}
	});

	it('marks a bad field on the settings page in the browser, keeps what was typed, then saves', async () => {
		const browser = await launch();
		try {
			const page = await browser.newPage({ viewport: { width: 1280, height: 1000 } });
			await signInPage(page, base(), 'e2e-engineer', TEST_PASSWORD);
			await page.waitForURL(`${base()}/`);
			await page.goto(`${base()}/account/mail`);
			await page.getByLabel('E-mail address').fill('engineer@wrenfield.example');
			await page.getByLabel('Time zone').fill('Europe/Wien');
			await page.getByRole('button', { name: 'Save mail settings' }).click();
			await expect.poll(() => page.getByText('"Europe/Wien" is not a time zone name').isVisible()).toBe(true);
			expect(await page.getByLabel('Time zone').getAttribute('aria-invalid')).toBe('true');
			expect(await page.getByLabel('E-mail address').inputValue()).toBe('engineer@wrenfield.example');
			await screenshot(page, 'mail-settings-error');
			await page.getByLabel('Time zone').fill('Europe/Vienna');
			await page.getByRole('button', { name: 'Save mail settings' }).click();
			await expect.poll(() => page.getByText('Your mail settings are saved.').isVisible()).toBe(true);
			const id = (await k('users').where({ username: 'e2e-engineer' }).first('id')).id;
			expect((await k('mail_subscriptions').where({ user_id: id }).first()).time_zone).toBe('Europe/Vienna');
			// the unsubscribe page, as someone who is not signed in sees it
			const anon = await browser.newPage({ viewport: { width: 900, height: 600 } });
			await anon.goto(`${base()}/unsubscribe?token=${encodeURIComponent(await unsubscribeToken(id, 'digest', k))}`);
			await screenshot(anon, 'mail-unsubscribe');
			await anon.getByRole('button', { name: 'Stop morning digests' }).click();
			await expect.poll(() => anon.getByTestId('unsubscribed').isVisible()).toBe(true);
			expect((await k('mail_subscriptions').where({ user_id: id }).first()).digest_enabled).toBe(0);
		} finally {
			await browser.close();
		}
	});
});
