/** The demo's mail subscriptions pass the settings page's own validation against the demo fab's areas and chambers. */
import { afterAll, beforeAll, expect, it } from 'vitest';
import { useTempDb } from '../../helpers/temp-db.ts';
import { AREAS, EPISODE_CHAMBERS, PEOPLE } from '../../../seeds/demo/fab.ts';
import { seedDemoMail } from '../../../seeds/demo-mail.ts';
import { createUser } from '../../../src/lib/server/users.ts';
import { listSubscriptions } from '../../../src/lib/server/mail/subscriptions.ts';

let env: Awaited<ReturnType<typeof useTempDb>>;
beforeAll(async () => {
	env = await useTempDb();
	for (const a of AREAS) await env.k('areas').insert(a);
	const area = await env.k('areas').where({ code: 'DE' }).first('id');
	await env.k('tools').insert({ code: 'T', name: 'T', area_id: area.id });
	const tool = await env.k('tools').first('id');
	for (const c of Object.values(EPISODE_CHAMBERS)) await env.k('chambers').insert({ code: c, name: c, tool_id: tool.id, created_at: 0 });
	for (const p of PEOPLE) await createUser({ ...p, password: 'demo-password-1', timeZone: 'Europe/Vienna' });
});
afterAll(() => env.cleanup());

it('subscribes the demo people with valid settings', async () => {
	expect(await seedDemoMail(env.k)).toBe(6);
	const subs = await listSubscriptions();
	expect(subs.map((s) => s.username).sort()).toEqual(['dokafor', 'hlindqvist', 'kmensah', 'mtanaka', 'rduarte', 'sbrenner']);
	expect(subs.find((s) => s.username === 'kmensah')).toMatchObject({ timeZone: 'Asia/Singapore', digestTime: '06:30', areaCodes: ['CE', 'DE'] });
	expect(subs.filter((s) => s.alarmMails).map((s) => s.username).sort()).toEqual(['dokafor', 'hlindqvist', 'mtanaka']);
});
