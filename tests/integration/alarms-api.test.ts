/**
 * `GET /api/alarms` and `POST /api/alarms/acknowledge` (issue "Day one at a real fab", item 5): the
 * route handlers called as SvelteKit calls them, on a fab with alarms; bad input answers 400 naming the
 * field; nothing is half-written.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../helpers/temp-db.ts';
import { createFab, insertWaferSteps, latentRows } from '../helpers/fab.ts';
import { approveBaseline, createDraftBaseline } from '../../src/lib/server/baselines.ts';
import { scoreWaferSteps } from '../../src/lib/server/scoring.ts';
import { createUser } from '../../src/lib/server/users.ts';
import { decide } from '../../src/lib/server/route-policy.ts';
import { GET } from '../../src/routes/api/alarms/+server.ts';
import { POST } from '../../src/routes/api/alarms/acknowledge/+server.ts';

let env: Awaited<ReturnType<typeof useTempDb>>;
let fab: Awaited<ReturnType<typeof createFab>>;
let eng: { id: string; role: 'engineer' };
let alarmId: number;
const T0 = Date.UTC(2026, 10, 1);

// eslint-disable-next-line @typescript-eslint/no-explicit-any
const get = async (q: string) => (await GET({ url: new URL(`http://lockstep.test/api/alarms${q}`) } as any)) as Response;
const post = async (body: unknown, user: typeof eng | null = eng, origin?: string) =>
	(await POST({
		url: new URL('http://lockstep.test/api/alarms/acknowledge'),
		request: new Request('http://lockstep.test/api/alarms/acknowledge', {
			method: 'POST',
			headers: { 'content-type': 'application/json', ...(origin ? { origin } : {}) },
			body: typeof body === 'string' ? body : JSON.stringify(body)
		}),
		locals: { user }
		// eslint-disable-next-line @typescript-eslint/no-explicit-any
	} as any)) as Response;

beforeAll(async () => {
	env = await useTempDb();
	fab = await createFab(env.k, { chambers: 1, features: 12 });
	eng = { id: (await createUser({ username: 'eng', displayName: 'Eng', password: 'engineer-pass', role: 'engineer' })).id, role: 'engineer' };
	const ch = fab.chamberIds[0];
	const g = await insertWaferSteps(env.k, { chamberId: ch, recipeStepId: fab.recipeStepId, rows: latentRows(80, 12, 1), start: T0, prefix: 'g', golden: true });
	const d = await createDraftBaseline({ chamberId: ch, recipeStepId: fab.recipeStepId, waferStepIds: g.map((w) => w.id), components: 3, builtBy: eng.id });
	await approveBaseline(d.id, eng.id);
	const ws = await insertWaferSteps(env.k, { chamberId: ch, recipeStepId: fab.recipeStepId, rows: latentRows(2, 12, 9, { feature: 2, by: 3 }), start: T0 + 86_400_000, prefix: 'x' });
	const r = await env.k.transaction((trx) => scoreWaferSteps(trx, ws.map((w) => ({ id: w.id, chamberId: ch, recipeStepId: fab.recipeStepId, processedAt: w.processedAt, featureSetVersion: 1, values: w.values }))));
	alarmId = r.alarmsOpened[0];
});
afterAll(() => env.cleanup());

describe('GET /api/alarms', () => {
	it('lists live alarms with rule, severity, state, first and latest wafer, worst ratio and leading contributors', async () => {
		const res = await get('?chamber=CH1');
		expect(res.status).toBe(200);
		const body = await res.json();
		const a = body.alarms.find((x: { id: number }) => x.id === alarmId);
		expect(a).toMatchObject({ rule: 'single', severity: 'alarm', state: 'open', chamber: 'CH1', recipe: 'RCP', step: 'main', waferCount: 2 });
		expect(a.firstWafer.waferId).toBe('x-0');
		expect(a.latestWafer.waferId).toBe('x-1');
		expect(a.worstRatio).toBeGreaterThan(1);
		// The shifted feature leads (a 3-unit shift on f2 against noise of 0.1).
		expect(a.leadingContributors[0]).toBe('f2');
		expect(a.openedAt).toBe(new Date(T0 + 86_400_000).toISOString());
	});

	it('filters by state and since, and answers 400 naming the field for bad values', async () => {
		expect((await (await get('?state=cleared')).json()).alarms).toEqual([]);
		expect((await (await get(`?since=${encodeURIComponent('2026-11-03T00:00:00Z')}`)).json()).alarms).toEqual([]);
		expect((await (await get(`?since=${T0}`)).json()).alarms.length).toBeGreaterThan(0);
		for (const [q, field] of [
			['?state=asleep', 'state'],
			['?since=yesterday', 'since'],
			['?chamber=NOPE', 'chamber'],
			['?limit=0', 'limit']
		]) {
			const res = await get(q);
			expect(res.status, q).toBe(400);
			expect((await res.json()).field).toBe(field);
		}
	});

	it('is open to a read token and a viewer; acknowledging needs an engineer’s session', () => {
		const u = new URL('http://x/api/alarms');
		expect(decide('/api/alarms', 'GET', u, null, false, { scopes: ['read'], owner: null })).toEqual({ allow: true });
		expect(decide('/api/alarms', 'GET', u, 'viewer', false)).toEqual({ allow: true });
		expect(decide('/api/alarms/acknowledge', 'POST', u, 'viewer', false).allow).toBe(false);
		expect(decide('/api/alarms/acknowledge', 'POST', u, null, false, { scopes: ['read'], owner: null }).allow).toBe(false);
		expect(decide('/api/alarms/acknowledge', 'POST', u, 'engineer', false)).toEqual({ allow: true });
	});
});

describe('POST /api/alarms/acknowledge', () => {
	it('answers 400 naming the field, and writes nothing', async () => {
		const cases: [unknown, string | null][] = [
			['not json', null],
			[{ alarmIds: [], cause: 'FA-LIMIT', disposition: 'continue' }, 'alarmIds'],
			[{ alarmIds: [alarmId, -2], cause: 'FA-LIMIT', disposition: 'continue' }, 'alarmIds[1]'],
			[{ alarmIds: [alarmId], cause: '', disposition: 'continue' }, 'cause'],
			[{ alarmIds: [alarmId], cause: 'NO-SUCH', disposition: 'continue' }, 'cause'],
			[{ alarmIds: [alarmId], cause: 'FA-LIMIT', disposition: 'shrug' }, 'disposition'],
			[{ alarmIds: [alarmId], cause: 'FA-LIMIT', disposition: 'continue', comment: 7 }, 'comment'],
			[{ alarmIds: [alarmId, 424242], cause: 'FA-LIMIT', disposition: 'continue' }, 'alarmIds']
		];
		for (const [body, field] of cases) {
			const res = await post(body);
			expect(res.status, JSON.stringify(body)).toBe(400);
			expect((await res.json()).field).toBe(field);
		}
		expect((await env.k('alarms').where({ id: alarmId }).first()).state).toBe('open');
		expect(await env.k('alarm_actions').where({ alarm_id: alarmId, action: 'acknowledged' })).toHaveLength(0);
		expect((await post({ alarmIds: [alarmId], cause: 'FA-LIMIT', disposition: 'continue' }, null)).status).toBe(401);
		expect((await post({ alarmIds: [alarmId], cause: 'FA-LIMIT', disposition: 'continue' }, eng, 'http://evil.test')).status).toBe(403);
	});

	it('acknowledges as the signed-in engineer with cause, disposition and comment', async () => {
		const res = await post({ alarmIds: [alarmId], cause: 'HW-MFC', disposition: 'hold_recommended', comment: 'O₂ MFC suspected' });
		expect(res.status).toBe(200);
		expect(await res.json()).toEqual({ acknowledged: [alarmId] });
		const act = await env.k('alarm_actions').where({ alarm_id: alarmId, action: 'acknowledged' }).first();
		expect(act).toMatchObject({ user_id: eng.id, disposition: 'hold_recommended', comment: 'O₂ MFC suspected' });
		const listed = (await (await get('?state=acknowledged')).json()).alarms;
		expect(listed.map((a: { id: number }) => a.id)).toEqual([alarmId]);
	});
});
