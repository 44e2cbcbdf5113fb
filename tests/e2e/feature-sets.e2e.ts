/**
 * Feature-set changes over HTTP against the built server: a file with a new column is refused for its
 * step and proposed; a viewer sees the proposal but is refused the actions; an engineer must confirm,
 * then accepts; the same file sent again is stored without a baseline; an old-set file is refused and
 * proposes, and an engineer dismisses that in Chromium.
 */
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import type { Browser } from 'playwright-core';
import { openDb } from '../../src/lib/server/db.ts';
import { launch, screenshot, signInPage } from './browser.ts';
import { TEST_PASSWORD, TEST_USERS } from './global-setup.ts';
import { base, request, signIn } from './http.ts';

const CHAMBER = 'E2E-FS1';
const RECIPE = 'E2E-FSET';
const OLD = 'wafer_id,lot_id,chamber_id,recipe,step,processed_at,oes_750.4,oes_777.4,pressure_mtorr';
const NEW = `${OLD},chuck_temp_c`;
const line = (i: number, extra = false) =>
	`E2E-FS-W${i},LFS,${CHAMBER},${RECIPE},main,2026-11-03T06:${String(i).padStart(2, '0')}:00Z,${1200 + i},${810 + i},15.${i}${extra ? `,2${i}.5` : ''}`;
const file = (header: string, from: number, extra: boolean) => [header, ...[0, 1, 2].map((j) => line(from + j, extra))].join('\n') + '\n';

function db() {
	return openDb({ client: 'better-sqlite3', filename: path.join(inject('dataDir'), 'lockstep.sqlite'), connectionString: null });
}
async function query<T>(fn: (k: ReturnType<typeof db>) => Promise<T>): Promise<T> {
	const k = db();
	try {
		return await fn(k);
	} finally {
		await k.destroy();
	}
}
const stepState = () =>
	query(async (k) => {
		const s = await k('recipe_steps as rs').join('recipes as r', 'r.id', 'rs.recipe_id').where({ 'r.code': RECIPE, 'rs.name': 'main' }).first('rs.id', 'rs.feature_set_version');
		const proposals = await k('feature_set_proposals').where({ recipe_step_id: s.id }).orderBy('id').select('id', 'status', 'decided_by', 'accepted_set_version');
		return { stepId: Number(s.id), version: Number(s.feature_set_version), proposals };
	});

function post(body: string, name: string, cookie: string) {
	return fetch(`${base()}/api/ingest?name=${name}`, { method: 'POST', body, headers: { 'content-type': 'text/csv', cookie, origin: base() } });
}

let engineer = '';
let viewer = '';
let browser: Browser | null = null;
beforeAll(async () => {
	await query(async (k) => {
		if (await k('chambers').where({ code: CHAMBER }).first()) return;
		const [a] = await k('areas').insert({ code: 'E2E-FS', name: 'E2E feature sets' }).returning('id');
		const [t] = await k('tools').insert({ code: 'E2E-FS-T1', name: 'E2E feature-set tool', area_id: a.id }).returning('id');
		await k('chambers').insert({ code: CHAMBER, name: CHAMBER, tool_id: t.id, created_at: Date.now() });
	});
	engineer = await signIn('engineer');
	viewer = await signIn('viewer');
});
afterAll(async () => {
	await browser?.close();
});

describe('feature-set changes over HTTP', () => {
	let proposalId = 0;

	it('a file with a new column is refused for the step, naming it, and proposes the new set', async () => {
		const first = await post(file(OLD, 0, false), 'fs-set1.csv', engineer);
		expect(first.status).toBe(200);
		expect((await first.json()).rows.accepted).toBe(3);
		const r = await post(file(NEW, 10, true), 'fs-set2.csv', engineer);
		// every row refused: 422 with the first rejection (http.ts)
		expect(r.status).toBe(422);
		const body = await r.json();
		expect(body.report.rows).toMatchObject({ accepted: 0, rejected: 3 });
		expect(body.report.rejections[0].reason).toMatch(/\(feature set 1\) — not in the step's set: chuck_temp_c/);
		const s = await stepState();
		expect(s.version).toBe(1);
		expect(s.proposals).toEqual([{ id: expect.any(Number), status: 'pending', decided_by: null, accepted_set_version: null }]);
		proposalId = s.proposals[0].id;
	});

	it("a viewer sees the proposal without controls; the server refuses a viewer's accept and dismiss", async () => {
		const page = await request('/uploads/feature-sets', { cookie: viewer });
		expect(page.status).toBe(200);
		const html = await page.text();
		expect(html).toContain(`data-testid="proposal-${proposalId}"`);
		expect(html).toContain('+ chuck_temp_c');
		expect(html).toContain('fs-set2.csv');
		expect(html).not.toContain('action="?/accept"');
		const engineerHtml = await (await request('/uploads/feature-sets', { cookie: engineer })).text();
		expect(engineerHtml).toContain('action="?/accept"');
		for (const action of ['accept', 'dismiss']) {
			const r = await request(`/uploads/feature-sets?/${action}`, { cookie: viewer, form: { proposalId: String(proposalId), confirm: 'yes' } });
			expect(r.status).toBe(403);
		}
		expect(await stepState()).toMatchObject({ version: 1, proposals: [{ id: proposalId, status: 'pending' }] });
	});

	it("an engineer must tick the confirmation; then accepting makes set 2 the step's set", async () => {
		const unconfirmed = await request('/uploads/feature-sets?/accept', { cookie: engineer, form: { proposalId: String(proposalId) } });
		expect(unconfirmed.status).toBe(400);
		expect(await unconfirmed.text()).toContain('Tick the box to confirm');
		expect((await stepState()).version).toBe(1);
		const ok = await request('/uploads/feature-sets?/accept', { cookie: engineer, form: { proposalId: String(proposalId), confirm: 'yes' } });
		expect(ok.status).toBe(200);
		expect(await ok.text()).toContain('Feature set 2');
		const s = await stepState();
		const engineerId = await query(async (k) => (await k('users').where({ username: TEST_USERS.engineer }).first('id')).id);
		expect(s).toMatchObject({ version: 2, proposals: [{ id: proposalId, status: 'accepted', decided_by: engineerId, accepted_set_version: 2 }] });
		const again = await request('/uploads/feature-sets?/accept', { cookie: engineer, form: { proposalId: String(proposalId), confirm: 'yes' } });
		expect(again.status).toBe(400);
		expect(await again.text()).toContain('already accepted');
		const unknown = await request('/uploads/feature-sets?/accept', { cookie: engineer, form: { proposalId: '99999999', confirm: 'yes' } });
		expect(unknown.status).toBe(400);
	});

	it('the refused file sent again is stored on set 2 without a baseline; an old-set file is refused naming the columns', async () => {
		const r = await post(file(NEW, 10, true), 'fs-set2.csv', engineer);
		expect(r.status).toBe(200);
		const report = await r.json();
		expect(report.rows).toMatchObject({ accepted: 3, rejected: 0 });
		expect(report.waferSteps).toEqual({ scored: 0, noBaseline: 3 });
		const states = await query((k) => k('wafer_steps').whereIn('wafer_id', ['E2E-FS-W10', 'E2E-FS-W11', 'E2E-FS-W12']).select('feature_set_version', 'scoring_state'));
		expect(states).toEqual(Array(3).fill({ feature_set_version: 2, scoring_state: 'no_baseline' }));
		const old = await post(file(OLD, 20, false), 'fs-old.csv', engineer);
		expect(old.status).toBe(422);
		expect((await old.json()).report.rejections[0].reason).toMatch(/\(feature set 2\) — missing from this file: chuck_temp_c/);
		expect((await stepState()).proposals.map((p) => p.status)).toEqual(['accepted', 'pending']);
	});

	it('an engineer dismisses the old-set proposal in the browser after confirming', async () => {
		const { proposals } = await stepState();
		const id = proposals[1].id;
		browser = await launch();
		const page = await browser.newPage();
		await signInPage(page, base(), TEST_USERS.engineer, TEST_PASSWORD);
		await page.waitForURL((u) => !u.pathname.startsWith('/sign-in'));
		await page.goto(`${base()}/uploads/feature-sets`);
		const card = page.getByTestId(`proposal-${id}`);
		await card.getByText('− chuck_temp_c').waitFor();
		// the old columns are exactly set 1's: accepting would return the step to set 1, not write a set 3
		await card.getByTestId('outcome').filter({ hasText: 'returns the step to set 1 (no new set)' }).waitFor();
		await card.getByText('Return to set 1…').click();
		await card.getByText('without a set-1 baseline go unscored until one is approved').waitFor();
		await screenshot(page, 'feature-sets-pending');
		await card.getByText('Dismiss…').click();
		await card.getByRole('button', { name: `Dismiss proposal #${id}` }).click();
		await page.getByTestId('action-message').filter({ hasText: `Proposal #${id} dismissed` }).waitFor();
		await screenshot(page, 'feature-sets-dismissed');
		expect(await page.getByTestId(`proposal-${id}`).count()).toBe(0);
		expect((await stepState()).proposals.map((p) => p.status)).toEqual(['accepted', 'dismissed']);
	});
});
