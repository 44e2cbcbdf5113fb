/**
 * Digest scheduling across time zones: each subscriber's digest is queued at their own 06:30, once,
 * across repeated runs and a restart; weekly summaries on their day; summer time handled.
 * Zone offsets: IANA time zone database as shipped with Node's ICU — Europe/Vienna UTC+1 in winter and
 * UTC+2 in summer time from 01:00 UTC on the last Sunday of March (EU Directive 2000/84/EC, art. 2);
 * America/Phoenix UTC−7 all year (Arizona keeps no summer time); Asia/Kolkata UTC+5:30.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../../helpers/temp-db.ts';
import { createFab } from '../../helpers/fab.ts';
import { runDigestSchedule } from '../../../src/lib/server/mail/digest.ts';
import { defaultInput, saveSubscription } from '../../../src/lib/server/mail/subscriptions.ts';
import { latestScheduled, zonedInstant } from '../../../src/lib/server/mail/zones.ts';
import { setClock } from '../../../src/lib/server/time.ts';
import { createUser } from '../../../src/lib/server/users.ts';

let env: Awaited<ReturnType<typeof useTempDb>>;
const users: Record<string, string> = {};
const ZONES = { vienna: 'Europe/Vienna', phoenix: 'America/Phoenix', kolkata: 'Asia/Kolkata' } as const;
const DAY0 = Date.UTC(2026, 11, 8); // Tuesday 8 Dec 2026, 00:00 UTC

beforeAll(async () => {
	env = await useTempDb();
	await createFab(env.k, { chambers: 3, features: 4 });
	// Subscribed on Monday 7 Dec at 14:00 UTC: after that day's 06:30 in all three zones.
	setClock(DAY0 - 10 * 3_600_000);
	for (const [name, zone] of Object.entries(ZONES)) {
		users[name] = (await createUser({ username: name, displayName: name, password: `${name}-password-1`, role: 'viewer' })).id;
		expect(await saveSubscription(users[name], { ...defaultInput({ email: null, timeZone: zone }), email: `${name}@wrenfield.example` })).toEqual({ ok: true });
	}
});
afterAll(async () => {
	setClock(null);
	await env.cleanup();
});

describe('time zones', () => {
	it('converts a zone’s wall clock to UTC, summer time included', () => {
		expect(new Date(zonedInstant(2026, 12, 8, 6, 30, 'Europe/Vienna')).toISOString()).toBe('2026-12-08T05:30:00.000Z');
		expect(new Date(zonedInstant(2026, 7, 8, 6, 30, 'Europe/Vienna')).toISOString()).toBe('2026-07-08T04:30:00.000Z');
		expect(new Date(zonedInstant(2026, 12, 8, 6, 30, 'America/Phoenix')).toISOString()).toBe('2026-12-08T13:30:00.000Z');
		expect(new Date(zonedInstant(2026, 12, 8, 6, 30, 'Asia/Kolkata')).toISOString()).toBe('2026-12-08T01:00:00.000Z');
		// 29 March 2026 is the last Sunday of March: 06:30 is already summer time (UTC+2).
		expect(new Date(zonedInstant(2026, 3, 29, 6, 30, 'Europe/Vienna')).toISOString()).toBe('2026-03-29T04:30:00.000Z');
		expect(new Date(zonedInstant(2026, 3, 28, 6, 30, 'Europe/Vienna')).toISOString()).toBe('2026-03-28T05:30:00.000Z');
		// 02:30 does not exist that night in Vienna (clocks jump 02:00 → 03:00): the instant after the gap.
		expect(new Date(zonedInstant(2026, 3, 29, 2, 30, 'Europe/Vienna')).toISOString()).toBe('2026-03-29T01:30:00.000Z');
		// A weekly schedule on Mondays (1): the Monday before Tuesday 8 Dec.
		expect(new Date(latestScheduled(DAY0 + 12 * 3_600_000, 'Europe/Vienna', '06:30', 1)).toISOString()).toBe('2026-12-07T05:30:00.000Z');
	});

	it('queues each subscriber’s digest at their own 06:30, once, over a day of runs every 10 minutes', async () => {
		const seen: Record<string, number[]> = {};
		for (let t = DAY0; t < DAY0 + 86_400_000; t += 10 * 60_000) {
			setClock(t);
			const r = await runDigestSchedule(t);
			for (const q of r.queued) (seen[q.userId] ??= []).push(t);
			// a second scheduler (or a restart) in the same minute finds nothing to do
			expect((await runDigestSchedule(t)).queued).toEqual([]);
		}
		const at = (name: string) => (seen[users[name]] ?? []).map((t) => new Date(t).toISOString());
		expect(at('kolkata')).toEqual(['2026-12-08T01:00:00.000Z']);
		expect(at('vienna')).toEqual(['2026-12-08T05:30:00.000Z']);
		expect(at('phoenix')).toEqual(['2026-12-08T13:30:00.000Z']);
		const keys = await env.k('mail_outbox').orderBy('id').pluck('dedupe_key');
		expect(keys).toEqual([
			`digest:${users.kolkata}:2026-12-08T01:00:00.000Z`,
			`digest:${users.vienna}:2026-12-08T05:30:00.000Z`,
			`digest:${users.phoenix}:2026-12-08T13:30:00.000Z`
		]);
		// Each covers the 24 h before its own 06:30.
		const phoenix = await env.k('mail_outbox').where({ user_id: users.phoenix }).first('text_body');
		expect(phoenix.text_body).toContain('Mon 7 Dec, 06:30 → Tue 8 Dec, 06:30 (America/Phoenix)');
	});

	it('sends a weekly summary on the policy’s day (Monday) at the digest time, and a late digest catches up once', async () => {
		const monday = Date.UTC(2026, 11, 14, 5, 31); // Monday 14 Dec, 06:31 in Vienna
		const s = await saveSubscription(users.vienna, { ...defaultInput({ email: null, timeZone: 'Europe/Vienna' }), email: 'vienna@wrenfield.example', weeklySummary: true });
		expect(s).toEqual({ ok: true });
		setClock(monday);
		// The scheduler was down from Tuesday 8 Dec to Monday 14 Dec: one digest covers the gap, not six.
		const r = await runDigestSchedule(monday);
		const mine = r.queued.filter((q) => q.userId === users.vienna).map((q) => q.kind);
		expect(mine.sort()).toEqual(['digest', 'weekly']);
		const digest = await env.k('mail_outbox').where({ user_id: users.vienna, kind: 'digest' }).orderBy('id', 'desc').first('text_body');
		expect(digest.text_body).toContain('Tue 8 Dec, 06:30 → Mon 14 Dec, 06:30 (Europe/Vienna)');
		const weekly = await env.k('mail_outbox').where({ user_id: users.vienna, kind: 'weekly' }).first('subject', 'text_body');
		expect(weekly.subject).toMatch(/^Lockstep weekly summary Mon 14 Dec:/);
		expect(weekly.text_body).toContain('Mon 7 Dec, 06:30 → Mon 14 Dec, 06:30 (Europe/Vienna)');
		expect((await runDigestSchedule(monday + 60_000)).queued.filter((q) => q.userId === users.vienna)).toEqual([]);
	});
});
