/**
 * Alarms are episodes (issue: "Alarms that mean what they say", item 4): an alarm clears by itself
 * after a run of in-control wafers; a later excursion opens a new alarm; an acknowledged alarm that
 * was a false alarm, or gets materially worse, hands over to a new alarm that says why. Also the
 * migration that made room for `cleared` on SQLite (CHECK constraints rebuilt, triggers kept).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../helpers/temp-db.ts';
import { createFab, insertWaferSteps, latentRows } from '../helpers/fab.ts';
import { approveBaseline, createDraftBaseline } from '../../src/lib/server/baselines.ts';
import { scoreWaferSteps } from '../../src/lib/server/scoring.ts';
import { acknowledgeAlarms, clearEpisode, closeAlarm, raiseOrExtend, supersedeReason } from '../../src/lib/server/alarms.ts';
import { putSetting } from '../../src/lib/server/settings.ts';
import { createUser } from '../../src/lib/server/users.ts';

let env: Awaited<ReturnType<typeof useTempDb>>;
let fab: Awaited<ReturnType<typeof createFab>>;
let eng: string;
const T0 = Date.UTC(2026, 10, 1);
const DAY = 86_400_000;
let clock = T0 + 2 * DAY;
let seed = 1000;

const score = async (chamberId: number, rows: Float64Array[]) => {
	const ws = await insertWaferSteps(env.k, { chamberId, recipeStepId: fab.recipeStepId, rows, start: clock, everyMs: 60_000, prefix: `w${seed}` });
	clock += rows.length * 60_000;
	return env.k.transaction((trx) =>
		scoreWaferSteps(trx, ws.map((w) => ({ id: w.id, chamberId, recipeStepId: fab.recipeStepId, processedAt: w.processedAt, featureSetVersion: 1, values: w.values })))
	);
};
const quiet = (n: number) => latentRows(n, 12, seed++);
const off = (n: number, feature: number, by: number) => latentRows(n, 12, seed++, { feature, by });
const alarmsOf = (chamberId: number) => env.k('alarms').where({ chamber_id: chamberId }).orderBy('id');

beforeAll(async () => {
	env = await useTempDb();
	fab = await createFab(env.k, { chambers: 2, features: 12 });
	eng = (await createUser({ username: 'eng', displayName: 'Eng', password: 'engineer-pass', role: 'engineer' })).id;
	await putSetting('alarm_policy', { clearAfter: 10, runEnabled: false, ewmaEnabled: false }, null);
	for (const ch of fab.chamberIds) {
		const g = await insertWaferSteps(env.k, { chamberId: ch, recipeStepId: fab.recipeStepId, rows: latentRows(80, 12, ch), start: T0, prefix: `g${ch}`, golden: true });
		const d = await createDraftBaseline({ chamberId: ch, recipeStepId: fab.recipeStepId, waferStepIds: g.map((w) => w.id), components: 3, builtBy: eng });
		await approveBaseline(d.id, eng);
	}
});
afterAll(() => env.cleanup());

describe('the migration', () => {
	it('accepts the new state and action, still refuses nonsense, keeps the audit trail append-only and one live alarm per rule', async () => {
		const ch = fab.chamberIds[1];
		const base = { chamber_id: ch, recipe_step_id: fab.recipeStepId, rule: 'single', severity: 'alarm', opened_at: 1, last_seen_at: 1 };
		const [row] = await env.k('alarms').insert({ ...base, state: 'cleared' }).returning('id');
		const id = typeof row === 'object' ? row.id : row;
		await expect(env.k('alarms').insert({ ...base, state: 'sleeping' })).rejects.toThrow(/CHECK/i);
		await env.k('alarm_actions').insert({ alarm_id: id, at: 1, action: 'cleared', from_state: 'open', to_state: 'cleared' });
		await expect(env.k('alarm_actions').insert({ alarm_id: id, at: 1, action: 'snoozed' })).rejects.toThrow(/CHECK/i);
		await expect(env.k('alarm_actions').where({ alarm_id: id }).update({ comment: 'edit' })).rejects.toThrow(/append-only/);
		await expect(env.k('alarm_actions').insert({ alarm_id: 999_999, at: 1, action: 'commented' })).rejects.toThrow(/FOREIGN KEY/i);
		// Cleared alarms do not block a live one; two live ones of one rule are refused.
		await env.k('alarms').insert({ ...base, state: 'open' });
		await expect(env.k('alarms').insert({ ...base, state: 'acknowledged' })).rejects.toThrow(/UNIQUE/i);
		await env.k('alarm_actions').where({ alarm_id: id }).count({ n: '*' }).first();
		// leave chamber 2 clean for later tests: close what was planted (closing appends, never edits)
		for (const a of await env.k('alarms').where({ chamber_id: ch }).whereIn('state', ['open', 'acknowledged'])) await closeAlarm(env.k, { alarmId: a.id, userId: eng, comment: 'test row' });
	});
});

describe('episodes', () => {
	const ch = () => fab.chamberIds[0];

	it('clears an alarm after clearAfter in-control wafers, then opens a new one for a new excursion', async () => {
		const r1 = await score(ch(), off(1, 3, 3));
		expect(r1.alarmsOpened).toHaveLength(1);
		await score(ch(), quiet(5));
		let [a] = await alarmsOf(ch());
		expect(a.state).toBe('open');
		// Quiet wafers: within limits and no violation. The in-control ones here are checked, not assumed.
		let n = 0;
		while ((await alarmsOf(ch()))[0].state !== 'cleared' && n < 60) {
			await score(ch(), quiet(1));
			n++;
		}
		[a] = await alarmsOf(ch());
		expect(a.state).toBe('cleared');
		expect(n + 5).toBeGreaterThanOrEqual(10);
		const actions = await env.k('alarm_actions').where({ alarm_id: a.id }).orderBy('id');
		expect(actions.map((x) => [x.action, x.from_state, x.to_state, x.user_id])).toEqual([
			['opened', null, 'open', null],
			['cleared', 'open', 'cleared', null]
		]);
		expect(actions[1].comment).toMatch(/10 consecutive wafers within their limits/);
		const r2 = await score(ch(), off(1, 5, 3));
		expect(r2.alarmsOpened).toHaveLength(1);
		expect(r2.alarmsOpened[0]).not.toBe(a.id);
		// A cleared alarm can still be acknowledged with its cause; it stays cleared.
		await acknowledgeAlarms(env.k, { alarmIds: [a.id], userId: eng, causeCode: 'FA-LIMIT', disposition: 'continue', comment: 'reviewed' });
		expect((await env.k('alarms').where({ id: a.id }).first()).state).toBe('cleared');
	});

	it('a violation after an acknowledgement as false alarm opens a new alarm that supersedes it, and both say why', async () => {
		const live = await env.k('alarms').where({ chamber_id: ch(), state: 'open' }).first();
		await acknowledgeAlarms(env.k, { alarmIds: [live.id], userId: eng, causeCode: 'FA-LIMIT', disposition: 'continue', comment: 'blip' });
		const r = await score(ch(), off(1, 7, 3));
		expect(r.alarmsOpened).toHaveLength(1);
		const fresh = await env.k('alarms').where({ id: r.alarmsOpened[0] }).first();
		expect(fresh.supersedes_id).toBe(live.id);
		expect((await env.k('alarms').where({ id: live.id }).first()).state).toBe('cleared');
		const why = await env.k('alarm_actions').where({ alarm_id: fresh.id, action: 'opened' }).first();
		expect(why.comment).toMatch(new RegExp(`Supersedes alarm #${live.id}, acknowledged as a false alarm \\(FA-LIMIT\\)`));
		const old = await env.k('alarm_actions').where({ alarm_id: live.id, action: 'cleared' }).first();
		expect(old.comment).toMatch(/Superseded by a new alarm/);
	});

	it('an acknowledged real cause absorbs a similar wafer but hands over when the ratio is ≥ 3× the acknowledged one', async () => {
		const live = await env.k('alarms').where({ chamber_id: ch(), state: 'open' }).first();
		await acknowledgeAlarms(env.k, { alarmIds: [live.id], userId: eng, causeCode: 'HW-MFC', disposition: 'continue', comment: 'MFC check requested' });
		const acked = await env.k('alarms').where({ id: live.id }).first();
		expect(acked.ack_ratio).toBeCloseTo(acked.worst_ratio, 12);
		// Same feature, same size: extended, not superseded.
		const same = await score(ch(), off(1, 7, 3));
		expect(same.alarmsOpened).toHaveLength(0);
		expect((await env.k('alarms').where({ id: live.id }).first()).wafer_count).toBe(2);
		// Far larger on the same feature: a new alarm, with the ratio reason.
		const worse = await score(ch(), off(1, 7, 12));
		expect(worse.alarmsOpened).toHaveLength(1);
		const why = await env.k('alarm_actions').where({ alarm_id: worse.alarmsOpened[0], action: 'opened' }).first();
		expect(why.comment).toMatch(/materially worse: worst ratio .* is ≥ 3× the .* at acknowledgement/);
	});

	it('judges leading contributors only on two clearly new features (pure rule)', () => {
		const live = { state: 'acknowledged' as const, acknowledged_at: 10, ack_ratio: 5, ack_leading_json: JSON.stringify(['a', 'b', 'c', 'd', 'e']) };
		expect(supersedeReason(live, { at: 20, ratio: 6, leading: ['x', 'y'] }, { code: 'HW-MFC', category: 'hardware' })).toMatch(/different leading contributors: now x, y/);
		expect(supersedeReason(live, { at: 20, ratio: 6, leading: ['x', 'a'] }, { code: 'HW-MFC', category: 'hardware' })).toBeNull();
		expect(supersedeReason({ ...live, state: 'open' as never }, { at: 20, ratio: 60 }, null)).toBeNull();
		expect(supersedeReason(live, { at: 20, ratio: 15 }, { code: 'HW-MFC', category: 'hardware' })).toMatch(/≥ 3×/);
	});

	it('closing is refused twice; an alarm can be closed from cleared', async () => {
		const cleared = await env.k('alarms').where({ chamber_id: ch(), state: 'cleared' }).first();
		await closeAlarm(env.k, { alarmId: cleared.id, userId: eng, comment: 'reviewed' });
		await expect(closeAlarm(env.k, { alarmId: cleared.id, userId: eng, comment: '' })).rejects.toThrow(/closed already/);
	});

	it('a fleet alarm is no wafer episode: in-control wafers leave it live; clearEpisode ends it with its reason', async () => {
		const f = await raiseOrExtend(env.k, { chamberId: ch(), recipeStepId: fab.recipeStepId, baselineId: null, rule: 'fleet', waferStepId: null, at: clock, ratio: 4, detail: {} });
		await score(ch(), quiet(12));
		expect((await env.k('alarms').where({ id: f.id }).first()).state).toBe('open');
		expect(await clearEpisode(env.k, f.id, clock, 'Back within the fleet in the latest match.')).toBe(true);
		expect(await clearEpisode(env.k, f.id, clock, 'again')).toBe(false);
		const act = await env.k('alarm_actions').where({ alarm_id: f.id, action: 'cleared' });
		expect(act.map((x) => x.comment)).toEqual(['Back within the fleet in the latest match.']);
	});
});
