/**
 * Mail settings and the unsubscribe link against the built server: validation with the field named,
 * a saved subscription, and a signed unsubscribe link that works without signing in — GET only asks,
 * POST turns the digest off, a forged or cut token is refused with the reason and changes nothing.
 */
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import type { Knex } from 'knex';
import { openDb } from '../../src/lib/server/db.ts';
import { unsubscribeToken } from '../../src/lib/server/mail/unsubscribe.ts';
import { request, signIn } from './http.ts';

let k: Knex;
let viewerId: string;
const form = (over: Record<string, string> = {}) => ({
	user: 'e2e-viewer',
	email: 'viewer@wrenfield.example',
	digestEnabled: 'on',
	digestTime: '06:30',
	timeZone: 'America/Phoenix',
	alarmMinSeverity: 'alarm',
	alarmMails: 'on',
	...over
});

beforeAll(async () => {
	k = openDb({ client: 'better-sqlite3', filename: path.join(inject('dataDir'), 'lockstep.sqlite'), connectionString: null });
	viewerId = (await k('users').where({ username: 'e2e-viewer' }).first('id')).id;
});
afterAll(async () => {
	await k.destroy();
});

describe('mail settings', () => {
	it('refuses a bad address and time zone, naming the fields, and saves nothing', async () => {
		const cookie = await signIn('viewer');
		const r = await request('/account/mail?/save', { cookie, form: form({ email: 'not-an-address', timeZone: 'Mars/Olympus' }) });
		expect(r.status).toBe(400);
		const html = await r.text();
		expect(html).toContain('is not an e-mail address');
		expect(html).toContain('is not a time zone name');
		expect(await k('mail_subscriptions').where({ user_id: viewerId }).first()).toBeUndefined();
	});

	it('saves the viewer’s own subscription, and refuses to edit someone else’s', async () => {
		const cookie = await signIn('viewer');
		expect((await request('/account/mail?/save', { cookie, form: form() })).status).toBe(200);
		const sub = await k('mail_subscriptions').where({ user_id: viewerId }).first();
		expect(sub).toMatchObject({ email: 'viewer@wrenfield.example', time_zone: 'America/Phoenix', digest_time: '06:30', digest_enabled: 1, alarm_mails: 1 });
		const other = await request('/account/mail?/save', { cookie, form: form({ user: 'e2e-admin' }) });
		expect(other.status).toBe(403);
		expect((await request('/account/mail?user=e2e-admin', { cookie })).status).toBe(403);
	});

	it('lets an admin open and save anyone’s', async () => {
		const cookie = await signIn('admin');
		const page = await request('/account/mail?user=e2e-viewer', { cookie });
		expect(page.status).toBe(200);
		expect(await page.text()).toContain('viewer@wrenfield.example');
		expect((await request('/account/mail?/save', { cookie, form: form({ digestTime: '07:15' }) })).status).toBe(200);
		expect((await k('mail_subscriptions').where({ user_id: viewerId }).first()).digest_time).toBe('07:15');
	});
});

describe('unsubscribe link', () => {
	it('asks on GET without signing in, and changes nothing', async () => {
		const token = await unsubscribeToken(viewerId, 'digest', k);
		const r = await request(`/unsubscribe?token=${encodeURIComponent(token)}`);
		expect(r.status).toBe(200);
		const html = await r.text();
		expect(html).toContain('Stop morning digests');
		expect(html).toContain('viewer@wrenfield.example');
		expect((await k('mail_subscriptions').where({ user_id: viewerId }).first()).digest_enabled).toBe(1);
	});

	it('turns the digest off on POST, and only the digest', async () => {
		const token = await unsubscribeToken(viewerId, 'digest', k);
		const r = await request(`/unsubscribe?token=${encodeURIComponent(token)}`, { form: { token } });
		expect(r.status).toBe(200);
		expect(await r.text()).toContain('Done: no more morning digests');
		const sub = await k('mail_subscriptions').where({ user_id: viewerId }).first();
		expect(sub.digest_enabled).toBe(0);
		expect(sub.alarm_mails).toBe(1);
	});

	it('refuses a forged, cut or missing token with the reason, and changes nothing', async () => {
		const token = await unsubscribeToken(viewerId, 'alarms', k);
		const forged = token.slice(0, -2) + (token.endsWith('AA') ? 'BB' : 'AA');
		const bad = await request(`/unsubscribe?token=${encodeURIComponent(forged)}`);
		expect(bad.status).toBe(400);
		expect(await bad.text()).toContain('signature does not match');
		const cut = await request(`/unsubscribe?token=${encodeURIComponent(token.split('.')[0])}`);
		expect(cut.status).toBe(400);
		expect(await cut.text()).toContain('malformed');
		expect((await request('/unsubscribe')).status).toBe(400);
		const post = await request('/unsubscribe', { form: { token: forged } });
		expect(post.status).toBe(400);
		expect((await k('mail_subscriptions').where({ user_id: viewerId }).first()).alarm_mails).toBe(1);
	});
});
