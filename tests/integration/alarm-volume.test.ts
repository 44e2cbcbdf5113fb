/**
 * End to end at a real fab's volume (issue "Alarms that mean what they say", figures): a generated
 * in-control fleet — 6 chambers × 2 recipe steps (12 and 40 features) at 20 wafers an hour for 48 hours
 * after their baselines, data the demo generator never made — scored through the real pipeline on an
 * empty database. All rules together must stay within the configured false alarms per 10,000
 * wafer-steps, and a later fault on a chamber whose alarms were acknowledged as false alarms must open
 * a new alarm within 10 wafers of its onset. The longer run: `node --import tsx bench/alarm-volume.ts`.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../helpers/temp-db.ts';
import { alarmCounts, buildVolumeFab, faultAfterFalseAlarm, runHours, type VolumeFab } from '../helpers/volume-fab.ts';
import { getSetting } from '../../src/lib/server/settings.ts';
import { createUser } from '../../src/lib/server/users.ts';

let env: Awaited<ReturnType<typeof useTempDb>>;
let fab: VolumeFab;
let users: [string, string];
const PER_HOUR = 20;

beforeAll(async () => {
	env = await useTempDb();
	users = [
		(await createUser({ username: 'va', displayName: 'A', password: 'volume-pass-a', role: 'engineer' })).id,
		(await createUser({ username: 'vb', displayName: 'B', password: 'volume-pass-b', role: 'engineer' })).id
	];
	fab = await buildVolumeFab(env.k, { chambers: 6, steps: [12, 40], wafersPerHour: PER_HOUR, hours: 48, golden: 100, seed: 1 }, users);
}, 60_000);
afterAll(() => env.cleanup());

describe('an in-control fleet at 20 wafers an hour', () => {
	it('raises no more false alarms than the budget (all rules together) and flags far fewer wafers than the old rules', async () => {
		const judged = await runHours(env.k, fab, 48, PER_HOUR);
		expect(judged).toBe(6 * 2 * 48 * PER_HOUR);
		const budget = (await getSetting('alarm_policy', env.k)).falseAlarmsPer10k;
		expect(budget).toBe(2);
		const counts = await alarmCounts(env.k);
		const total = Object.values(counts).reduce((a, b) => a + b, 0);
		// 11,520 wafer-steps × 2 per 10,000 = 2.3 false alarms allowed.
		expect(total).toBeLessThanOrEqual((budget * judged) / 10_000);
		// The old rules flagged ≈ 380 wafer-steps per 10,000 on this fleet (bench/alarm-volume.ts, before).
		const flagged = Number((await env.k('alarms').sum({ n: 'wafer_count' }).first())?.n ?? 0);
		expect(flagged).toBeLessThan((10 * judged) / 10_000);
	}, 60_000);

	it('a fault after a false alarm opens a NEW alarm within 10 wafers of its onset', async () => {
		const r = await faultAfterFalseAlarm(env.k, fab, { chamberId: fab.chamberIds[0], stepId: fab.stepIds[1], userId: users[0], shift: 0.5, maxWafers: 10, wafersPerHour: PER_HOUR });
		// The false alarm was live and acknowledged when the fault began…
		expect(r.acknowledged.length).toBeGreaterThan(0);
		expect(r.liveRulesAtOnset.length).toBeGreaterThan(0);
		// …and did not swallow it.
		expect(r.wafers).not.toBeNull();
		expect(r.wafers!).toBeLessThanOrEqual(10);
		const opened = await env.k('alarms').whereIn('id', r.openedAfter.map((a) => a.id));
		expect(opened.every((a) => a.state === 'open')).toBe(true);
		// Where a rule's acknowledged false alarm was live, the new alarm supersedes it and says so.
		for (const a of opened.filter((x) => r.liveRulesAtOnset.includes(x.rule))) {
			expect(r.acknowledged).toContain(a.supersedes_id);
			const why = await env.k('alarm_actions').where({ alarm_id: a.id, action: 'opened' }).first();
			expect(why.comment).toMatch(/acknowledged as a false alarm \(FA-LIMIT\)/);
		}
	}, 60_000);
});
