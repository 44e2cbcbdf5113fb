import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../helpers/temp-db.ts';
import { createFab, insertWaferSteps, latentRows } from '../helpers/fab.ts';
import { approveBaseline, createDraftBaseline, goldenCandidates, BaselineError } from '../../src/lib/server/baselines.ts';
import { scoreWaferSteps, rescoreSince } from '../../src/lib/server/scoring.ts';
import { acknowledgeAlarms, closeAlarm, AlarmError } from '../../src/lib/server/alarms.ts';
import { logMaintenance } from '../../src/lib/server/maintenance.ts';
import { putSetting } from '../../src/lib/server/settings.ts';
import { createUser } from '../../src/lib/server/users.ts';

let env: Awaited<ReturnType<typeof useTempDb>>;
let fab: Awaited<ReturnType<typeof createFab>>;
let engineer: string;
let reviewer: string;
const DAY = 86_400_000;
const T0 = Date.UTC(2026, 10, 1);

const asNew = (ws: { id: number; processedAt: number; values: Float64Array }[], chamberId: number) =>
	ws.map((w) => ({ id: w.id, chamberId, recipeStepId: fab.recipeStepId, processedAt: w.processedAt, featureSetVersion: 1, values: w.values }));

beforeAll(async () => {
	env = await useTempDb();
	fab = await createFab(env.k, { chambers: 2, features: 12 });
	engineer = (await createUser({ username: 'eng', displayName: 'Eng', password: 'engineer-pass', role: 'engineer' })).id;
	reviewer = (await createUser({ username: 'rev', displayName: 'Rev', password: 'reviewer-pass', role: 'engineer' })).id;
});
afterAll(() => env.cleanup());

describe('baseline lifecycle, scoring and alarms', () => {
	let baselineId: number;
	const ch = () => fab.chamberIds[0];

	it('marks wafers without an active baseline as such', async () => {
		const ws = await insertWaferSteps(env.k, { chamberId: ch(), recipeStepId: fab.recipeStepId, rows: latentRows(80, 12, 1), start: T0, prefix: 'g', golden: true });
		const r = await env.k.transaction((trx) => scoreWaferSteps(trx, asNew(ws, ch())));
		expect(r).toEqual({ scored: 0, noBaseline: 80, alarmsOpened: [] });
		const states = await env.k('wafer_steps').distinct('scoring_state');
		expect(states).toEqual([{ scoring_state: 'no_baseline' }]);
	});

	it('refuses a draft with too few wafers or wafers of another chamber', async () => {
		const ids = (await env.k('wafer_steps').where({ chamber_id: ch() }).select('id')).map((r) => r.id);
		await expect(createDraftBaseline({ chamberId: ch(), recipeStepId: fab.recipeStepId, waferStepIds: ids.slice(0, 5), builtBy: engineer })).rejects.toThrow(/at least 10/);
		await expect(createDraftBaseline({ chamberId: fab.chamberIds[1], recipeStepId: fab.recipeStepId, waferStepIds: ids, builtBy: engineer })).rejects.toThrow(/another chamber/);
		expect(Number((await env.k('baselines').count({ n: '*' }).first())!.n)).toBe(0);
	});

	it('fits a draft whose golden T² averages k(n−1)/n, and approves it', async () => {
		const ids = (await env.k('wafer_steps').where({ chamber_id: ch(), golden: true }).select('id')).map((r) => r.id);
		const d = await createDraftBaseline({ chamberId: ch(), recipeStepId: fab.recipeStepId, waferStepIds: ids, components: 3, builtBy: engineer });
		expect(d.version).toBe(1);
		expect(d.summary.n).toBe(80);
		expect(d.summary.k).toBe(3);
		// Identity: the mean in-sample T² of the training set is k(n−1)/n (Jackson 1991, §1.7; also
		// the identity list). Holds to rounding for any data.
		const meanT2 = d.summary.golden.reduce((s, g) => s + g.t2, 0) / d.summary.golden.length;
		expect(meanT2).toBeCloseTo((3 * 79) / 80, 9);
		await approveBaseline(d.id, engineer);
		const b = await env.k('baselines').where({ id: d.id }).first();
		expect(b.status).toBe('active');
		expect(b.approved_by).toBe(engineer);
		baselineId = d.id;
	});

	it('scores new in-control wafers and keeps the hourly rollup', async () => {
		const ws = await insertWaferSteps(env.k, { chamberId: ch(), recipeStepId: fab.recipeStepId, rows: latentRows(30, 12, 2), start: T0 + DAY, everyMs: 60_000, prefix: 'n' });
		const r = await env.k.transaction((trx) => scoreWaferSteps(trx, asNew(ws, ch())));
		expect(r.scored).toBe(30);
		const rollups = await env.k('hourly_rollups').where({ chamber_id: ch() });
		expect(rollups.reduce((s, x) => s + x.wafer_count, 0)).toBe(30);
		const scores = await env.k('scores').where({ chamber_id: ch() }).select('worst_ratio');
		expect(Math.max(...rollups.map((x) => x.worst_ratio))).toBeCloseTo(Math.max(...scores.map((s) => s.worst_ratio)), 12);
	});

	it('opens one alarm for a shifted wafer and extends it for the next (no alarm storm)', async () => {
		// Start from a quiet chamber: close whatever the in-control wafers raised (1 % per wafer and statistic).
		for (const a of await env.k('alarms').whereNot('state', 'closed')) await closeAlarm(env.k, { alarmId: a.id, userId: engineer, comment: 'reset for the test' });
		const shifted = latentRows(2, 12, 3, { feature: 4, by: 3 });
		const ws = await insertWaferSteps(env.k, { chamberId: ch(), recipeStepId: fab.recipeStepId, rows: shifted, start: T0 + 2 * DAY, prefix: 's' });
		const first = await env.k.transaction((trx) => scoreWaferSteps(trx, asNew(ws.slice(0, 1), ch())));
		// The single-wafer rule opens an alarm (the EWMA may open its own: one per rule).
		const opened = await env.k('alarms').whereIn('id', first.alarmsOpened).pluck('rule');
		expect(opened).toContain('single');
		const second = await env.k.transaction((trx) => scoreWaferSteps(trx, asNew(ws.slice(1), ch())));
		expect(second.alarmsOpened).toHaveLength(0);
		const alarms = await env.k('alarms').where({ chamber_id: ch(), rule: 'single' }).whereNot('state', 'closed');
		expect(alarms).toHaveLength(1);
		expect(alarms[0].wafer_count).toBe(2);
		expect(alarms[0].first_wafer_step_id).toBe(ws[0].id);
		expect(alarms[0].last_wafer_step_id).toBe(ws[1].id);
		const actions = await env.k('alarm_actions').where({ alarm_id: alarms[0].id });
		expect(actions.map((a) => a.action)).toEqual(['opened']);
	});

	it('acknowledges with a cause code and disposition, append-only, then closes', async () => {
		const alarm = await env.k('alarms').where({ chamber_id: ch(), rule: 'single' }).whereNot('state', 'closed').first();
		await expect(acknowledgeAlarms(env.k, { alarmIds: [alarm.id], userId: engineer, causeCode: 'NOPE', disposition: 'continue', comment: '' })).rejects.toThrow(AlarmError);
		await expect(acknowledgeAlarms(env.k, { alarmIds: [alarm.id, 9999], userId: engineer, causeCode: 'HW-MFC', disposition: 'continue', comment: '' })).rejects.toThrow(/No alarm 9999/);
		expect((await env.k('alarms').where({ id: alarm.id }).first()).state).toBe('open');
		await acknowledgeAlarms(env.k, { alarmIds: [alarm.id], userId: engineer, causeCode: 'HW-MFC', disposition: 'hold_recommended', comment: 'O2 MFC suspected' });
		expect((await env.k('alarms').where({ id: alarm.id }).first()).state).toBe('acknowledged');
		await closeAlarm(env.k, { alarmId: alarm.id, userId: engineer, comment: 'MFC recalibrated' });
		const actions = await env.k('alarm_actions').where({ alarm_id: alarm.id }).orderBy('id');
		expect(actions.map((a) => [a.action, a.from_state, a.to_state])).toEqual([
			['opened', null, 'open'],
			['acknowledged', 'open', 'acknowledged'],
			['closed', 'acknowledged', 'closed']
		]);
		expect(actions[1].disposition).toBe('hold_recommended');
		// After closing, a new violation opens a new alarm.
		const ws = await insertWaferSteps(env.k, { chamberId: ch(), recipeStepId: fab.recipeStepId, rows: latentRows(1, 12, 4, { feature: 4, by: 3 }), start: T0 + 3 * DAY, prefix: 's2' });
		const r = await env.k.transaction((trx) => scoreWaferSteps(trx, asNew(ws, ch())));
		expect(r.alarmsOpened.length).toBeGreaterThanOrEqual(1);
		expect(await env.k('alarms').where({ chamber_id: ch(), rule: 'single' }).whereNot('state', 'closed')).toHaveLength(1);
	});

	it('puts the chamber into requalify on a wet clean and leaves it when a new baseline is approved', async () => {
		await logMaintenance({ chamberId: ch(), kind: 'wet_clean', at: T0 + 3 * DAY + 3_600_000, userId: engineer, comment: 'scheduled' });
		expect((await env.k('chambers').where({ id: ch() }).first()).requalify_since).not.toBeNull();
		// Seasoning: the first wafers after the clean are excluded from golden candidates by default.
		const ws = await insertWaferSteps(env.k, { chamberId: ch(), recipeStepId: fab.recipeStepId, rows: latentRows(40, 12, 5), start: T0 + 4 * DAY, prefix: 'post' });
		const cands = await goldenCandidates({ chamberId: ch(), recipeStepId: fab.recipeStepId, from: T0 + 4 * DAY, to: T0 + 5 * DAY });
		expect(cands).toHaveLength(40);
		expect(cands.slice(0, 30).every((c) => c.excluded?.startsWith('seasoning'))).toBe(true);
		expect(cands.slice(30).every((c) => c.excluded === null)).toBe(true);
		const ids = [...cands.filter((c) => !c.excluded).map((c) => c.id), ...(await env.k('wafer_steps').where({ chamber_id: ch(), golden: true }).pluck('id'))];
		await putSetting('baseline_policy', { fourEyes: true }, null);
		const d = await createDraftBaseline({ chamberId: ch(), recipeStepId: fab.recipeStepId, waferStepIds: ids, components: 3, builtBy: engineer });
		await expect(approveBaseline(d.id, engineer)).rejects.toThrow(BaselineError);
		await approveBaseline(d.id, reviewer);
		expect((await env.k('baselines').where({ id: baselineId }).first()).status).toBe('retired');
		expect((await env.k('chambers').where({ id: ch() }).first()).requalify_since).toBeNull();
		// Rescoring keeps the old scores as history and the rollups consistent with the current ones.
		const r = await rescoreSince(env.k, { chamberId: ch(), recipeStepId: fab.recipeStepId, since: T0 + DAY });
		expect(r.rescored).toBe(30 + 2 + 1 + ws.length);
		const current = await env.k('scores').where({ chamber_id: ch(), current: true });
		expect(current.every((s) => s.baseline_id === d.id)).toBe(true);
		expect(await env.k('scores').where({ chamber_id: ch(), current: false, baseline_id: baselineId })).toHaveLength(33);
		const rollupCount = (await env.k('hourly_rollups').where({ chamber_id: ch() })).reduce((s, x) => s + x.wafer_count, 0);
		expect(rollupCount).toBe(current.length);
	});
});

describe('several violations in one batch', () => {
	it('open one alarm per rule and extend it by the rest, as one-by-one arrival would', async () => {
		const ch = fab.chamberIds[1];
		const g = await insertWaferSteps(env.k, { chamberId: ch, recipeStepId: fab.recipeStepId, rows: latentRows(60, 12, 11), start: T0, prefix: 'c2g', golden: true });
		const d = await createDraftBaseline({ chamberId: ch, recipeStepId: fab.recipeStepId, waferStepIds: g.map((w) => w.id), components: 3, builtBy: engineer });
		await approveBaseline(d.id, reviewer);
		const shifts = [3, 6, 4];
		const rows = shifts.map((by, i) => latentRows(1, 12, 20 + i, { feature: 7, by })[0]);
		const ws = await insertWaferSteps(env.k, { chamberId: ch, recipeStepId: fab.recipeStepId, rows, start: T0 + 5 * DAY, prefix: 'c2s' });
		const r = await env.k.transaction((trx) => scoreWaferSteps(trx, asNew(ws, ch)));
		const single = await env.k('alarms').where({ chamber_id: ch, rule: 'single' });
		expect(single).toHaveLength(1);
		expect(r.alarmsOpened).toContain(single[0].id);
		expect(single[0].wafer_count).toBe(3);
		expect(single[0].first_wafer_step_id).toBe(ws[0].id);
		expect(single[0].last_wafer_step_id).toBe(ws[2].id);
		const scores = await env.k('scores').whereIn('wafer_step_id', ws.map((w) => w.id)).orderBy('wafer_step_id');
		const worst = scores.reduce((a, b) => (b.worst_ratio > a.worst_ratio ? b : a));
		expect(single[0].worst_wafer_step_id).toBe(worst.wafer_step_id);
		expect(single[0].worst_ratio).toBeCloseTo(worst.worst_ratio, 12);
	});
});

describe('seasoning after a wet clean', () => {
	it('scores the seasoning wafers, holds their alarms and keeps them out of the rollup worst ratio', async () => {
		const ch = fab.chamberIds[1];
		const cleanAt = T0 + 10 * DAY;
		await logMaintenance({ chamberId: ch, kind: 'wet_clean', at: cleanAt, userId: engineer, comment: 'test clean' });
		for (const a of await env.k('alarms').where({ chamber_id: ch }).whereNot('state', 'closed')) await closeAlarm(env.k, { alarmId: a.id, userId: engineer, comment: 'reset' });
		// 35 wafers in one hour after the clean; the 3rd (inside the 30-wafer window) is far off, the 33rd too.
		const rows = latentRows(35, 12, 40).map((r, i) => {
			if (i === 2 || i === 32) r[5] += 8;
			return r;
		});
		const ws = await insertWaferSteps(env.k, { chamberId: ch, recipeStepId: fab.recipeStepId, rows, start: cleanAt + 60_000, everyMs: 60_000, prefix: 'seas' });
		const r = await env.k.transaction((trx) => scoreWaferSteps(trx, asNew(ws, ch)));
		expect(r.scored).toBe(35);
		const flagged = await env.k('scores').whereIn('wafer_step_id', ws.map((w) => w.id)).where('seasoning', true).count({ n: '*' }).first();
		expect(Number(flagged!.n)).toBe(30);
		const hour = Math.floor((cleanAt + 60_000) / 3_600_000) * 3_600_000;
		const rollups = await env.k('hourly_rollups').where({ chamber_id: ch, recipe_step_id: fab.recipeStepId }).andWhere('hour_at', '>=', hour).orderBy('hour_at');
		expect(rollups.reduce((s, x) => s + x.wafer_count, 0)).toBe(35);
		expect(rollups.reduce((s, x) => s + x.seasoning_wafer_count, 0)).toBe(30);
		// The worst ratio of the rollups is the worst of the 5 judged wafers, not of the seasoning one.
		const judged = await env.k('scores').whereIn('wafer_step_id', ws.slice(30).map((w) => w.id)).max({ m: 'worst_ratio' }).first();
		const seasoningWorst = await env.k('scores').where({ wafer_step_id: ws[2].id }).first('worst_ratio');
		expect(Math.max(...rollups.map((x) => x.worst_ratio ?? -Infinity))).toBeCloseTo(judged!.m, 12);
		expect(seasoningWorst.worst_ratio).toBeGreaterThan(judged!.m);
		// Only the judged outlier opened the single-wafer alarm.
		const single = await env.k('alarms').where({ chamber_id: ch, rule: 'single' }).whereNot('state', 'closed');
		expect(single).toHaveLength(1);
		expect(single[0].first_wafer_step_id).toBe(ws[32].id);
	});
});
