/**
 * The README's API walk-through against the built server, as far as this tree has it: a personal token
 * from `npm run token:create`, chambers registered in bulk (and every refusal answered with the field at
 * fault), a file ingested with the register scope (an unknown chamber lands in UNASSIGNED and is named
 * in the answer), the chamber assigned on /admin/structure, the document at /api/openapi.json, personal
 * tokens made and revoked on /account/tokens, and what a token's owner does recorded under their name.
 */
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import type { Browser } from 'playwright-core';
import { launch, screenshot, signInTo } from './browser.ts';
import { openDb } from '../../src/lib/server/db.ts';
import { runTsx } from '../load/server.ts';
import { TEST_USERS } from './global-setup.ts';
import { base, request, signIn } from './http.ts';

const dataDir = () => inject('dataDir');
const db = () => openDb({ client: 'better-sqlite3', filename: path.join(dataDir(), 'lockstep.sqlite'), connectionString: null });

/** `npm run token:create -- …` against the test server's data folder; stdout is the token alone. */
function tokenCreate(...args: string[]): string {
	return runTsx(['scripts/token-create.ts', ...args], { LOCKSTEP_DATA_DIR: dataDir(), NODE_ENV: 'production' }).trim();
}

const api = (token: string, p: string, init: { method?: string; json?: unknown; csv?: string } = {}) =>
	fetch(`${base()}${p}`, {
		method: init.method ?? (init.json !== undefined || init.csv !== undefined ? 'POST' : 'GET'),
		headers: {
			authorization: `Bearer ${token}`,
			...(init.json !== undefined ? { 'content-type': 'application/json' } : {}),
			...(init.csv !== undefined ? { 'content-type': 'text/csv' } : {})
		},
		body: init.json !== undefined ? JSON.stringify(init.json) : init.csv
	});

const HEADER = 'wafer_id,lot_id,chamber_id,recipe,step,processed_at,oes_750.4,oes_777.4,pressure_mtorr';
const row = (wafer: string, chamber: string, minute: number) => `${wafer},LWALK,${chamber},WALK-ETCH,main,2026-11-03T05:${String(minute).padStart(2, '0')}:00Z,1200.5,812.5,15.2`;

let admin = '';
let engineer = '';

describe('README walk-through: token → chambers → ingest with register', () => {
	it('1. token:create prints a personal token that acts as its owner', async () => {
		admin = tokenCreate('--user', TEST_USERS.admin, '--scope', 'read,write,ingest,register', '--name', 'walk-through');
		expect(admin).toMatch(/^lst_[A-Za-z0-9_-]{43}$/);
		const me = await (await api(admin, '/api/me')).json();
		expect(me.user).toMatchObject({ username: TEST_USERS.admin, role: 'admin' });
		engineer = tokenCreate('--user', TEST_USERS.engineer, '--scope', 'read,write,ingest');
		expect(() => tokenCreate('--user', TEST_USERS.engineer, '--scope', 'ingest,register')).toThrow(/Only an admin/);
	});

	it('2. registers chambers in bulk, creating the area and tool, and lists them', async () => {
		const r = await api(admin, '/api/chambers', {
			json: { chambers: [{ code: 'WK01-A', tool: 'WK01', area: 'WALK' }, { code: 'WK01-B', tool: 'WK01', area: 'WALK', name: 'Walk B' }] }
		});
		expect(r.status).toBe(201);
		expect(await r.json()).toMatchObject({ areasCreated: ['WALK'], toolsCreated: ['WK01'], chambers: [{ code: 'WK01-A' }, { code: 'WK01-B', name: 'Walk B' }] });
		const list = await (await api(admin, '/api/chambers')).json();
		expect(list.chambers).toContainEqual(expect.objectContaining({ code: 'WK01-B', tool: 'WK01', area: 'WALK', retiredAt: null }));
	});

	it('2b. answers what is wrong and where: 409 duplicate, 400 by JSON path, 400 broken JSON, 415, 403 by role and scope', async () => {
		const dup = await api(admin, '/api/chambers', { json: { code: 'WK01-A', tool: 'WK01', area: 'WALK' } });
		expect(dup.status).toBe(409);
		expect((await dup.json()).errors).toEqual({ code: 'Chamber WK01-A exists already, in tool WK01 (area WALK).' });
		const bad = await api(admin, '/api/chambers', { json: { chambers: [{ code: 'WK02-A', tool: 'WK02' }] } });
		expect(bad.status).toBe(400);
		expect(await bad.json()).toMatchObject({ error: expect.stringContaining('chambers[0].area'), errors: { 'chambers[0].area': expect.any(String) } });
		const broken = await fetch(`${base()}/api/chambers`, { method: 'POST', headers: { authorization: `Bearer ${admin}`, 'content-type': 'application/json' }, body: '{"code": "X",\n "tool": }' });
		expect(broken.status).toBe(400);
		expect((await broken.json()).location).toMatchObject({ line: 2 });
		// (text/plain without an Origin is a cross-site form post to SvelteKit: 403 before the route)
		const xml = await fetch(`${base()}/api/chambers`, { method: 'POST', headers: { authorization: `Bearer ${admin}`, 'content-type': 'application/xml' }, body: '<x/>' });
		expect(xml.status).toBe(415);
		expect((await xml.json()).error).toContain('application/xml');
		const asEngineer = await api(engineer, '/api/chambers', { json: { code: 'WK09-A', tool: 'WK01', area: 'WALK' } });
		expect(asEngineer.status).toBe(403);
		expect((await asEngineer.json()).error).toMatch(/admin role/);
		const readOnly = tokenCreate('--user', TEST_USERS.admin, '--scope', 'read');
		expect((await api(readOnly, '/api/chambers', { json: { code: 'WK09-A', tool: 'WK01', area: 'WALK' } })).status).toBe(403);
		expect((await api(readOnly, '/api/chambers')).status).toBe(200);
		const anon = await fetch(`${base()}/api/chambers`);
		expect(anon.status).toBe(401);
	});

	it('3. ingests a file: known chambers stored, an unknown one registered into UNASSIGNED and named', async () => {
		const csv = [HEADER, row('WKW-1', 'WK01-A', 1), row('WKW-2', 'WK01-B', 2), row('WKW-3', 'WK07-C', 3), row('WKW-4', 'WK07-D', 4)].join('\n') + '\n';
		const r = await api(admin, '/api/ingest?name=walk.csv', { csv });
		expect(r.status).toBe(200);
		const report = await r.json();
		expect(report.rows).toMatchObject({ total: 4, accepted: 4, rejected: 0 });
		expect(report.created.chambers).toEqual(['WK07-C', 'WK07-D']);
		const list = await (await api(admin, '/api/chambers')).json();
		expect(list.chambers).toContainEqual(expect.objectContaining({ code: 'WK07-C', tool: 'UNASSIGNED' }));
		const k = db();
		try {
			const file = await k('ingest_files').where({ id: report.fileId }).first('submitted_by', 'api_token_id', 'source');
			const owner = await k('users').where({ username: TEST_USERS.admin }).first('id');
			expect(file).toMatchObject({ submitted_by: owner.id, source: 'api' });
			expect(file.api_token_id).not.toBeNull();
		} finally {
			await k.destroy();
		}
	});

	it('3b. without register the unknown chamber is refused with the reason, and nothing is registered', async () => {
		const service = tokenCreate('--service', '--scope', 'ingest', '--name', 'walk-host');
		const r = await api(service, '/api/ingest?name=walk2.csv', { csv: [HEADER, row('WKW-9', 'WK08-D', 9)].join('\n') + '\n' });
		expect(r.status).toBe(422);
		const body = await r.json();
		expect(body.report.rejections[0]).toMatchObject({ line: 2, column: 'chamber_id', value: 'WK08-D', reason: expect.stringContaining('not a known chamber') });
		expect((await (await api(admin, '/api/chambers')).json()).chambers.some((c: { code: string }) => c.code === 'WK08-D')).toBe(false);
		// A service token reads the chamber list but never writes to it.
		expect((await api(service, '/api/chambers')).status).toBe(200);
		expect((await api(service, '/api/chambers', { json: { code: 'WK08-D', tool: 'WK01', area: 'WALK' } })).status).toBe(403);
	});

	it('3c. an admin assigns the registered chamber to its tool on /admin/structure', async () => {
		const cookie = await signIn('admin');
		const page = await (await request('/admin/structure', { cookie })).text();
		expect(page).toContain('waiting for a tool');
		expect(page).toContain('WK07-C');
		const r = await request('/admin/structure?/move', { cookie, form: { kind: 'chamber', code: 'WK07-C', to: 'WK01' } });
		expect(r.status).toBe(200);
		const bad = await request('/admin/structure?/move', { cookie, form: { kind: 'chamber', code: 'WK07-C', to: 'NO-SUCH' } });
		expect(bad.status).toBe(404);
		expect(await bad.text()).toContain('There is no tool NO-SUCH.');
		const list = await (await api(admin, '/api/chambers')).json();
		expect(list.chambers).toContainEqual(expect.objectContaining({ code: 'WK07-C', tool: 'WK01', area: 'WALK' }));
	});
});

describe('the API document and personal tokens', () => {
	it('serves the OpenAPI 3.1 document to anyone, naming this server', async () => {
		const r = await fetch(`${base()}/api/openapi.json`);
		expect(r.status).toBe(200);
		const doc = await r.json();
		expect(doc.openapi).toBe('3.1.0');
		expect(doc.servers[0].url).toBe(base());
		expect(Object.keys(doc.paths)).toEqual(expect.arrayContaining(['/api/chambers', '/api/ingest', '/api/qualifications/{id}/approve']));
	});

	it('a viewer makes a read token at /account/tokens, sees it once, uses it, revokes it', async () => {
		const cookie = await signIn('viewer');
		const refused = await request('/account/tokens?/create', { cookie, form: { name: 'my notebook', scope: 'write' } });
		expect(refused.status).toBe(400);
		expect(await refused.text()).toContain('a viewer’s token cannot write');
		const r = await request('/account/tokens?/create', { cookie, form: { name: 'my notebook', scope: 'read' } });
		expect(r.status).toBe(200);
		const token = /lst_[A-Za-z0-9_-]{43}/.exec(await r.text())?.[0] ?? '';
		expect(token).not.toBe('');
		expect((await (await api(token, '/api/me')).json()).user.username).toBe(TEST_USERS.viewer);
		expect((await api(token, '/api/uploads')).status).toBe(403); // an engineer's route: the viewer's role holds
		const listed = await (await request('/account/tokens', { cookie })).text();
		expect(listed).toContain('my notebook');
		expect(listed).not.toContain(token);
		const k = db();
		let id = 0;
		try {
			id = Number((await k('api_tokens').where({ name: 'my notebook' }).first('id')).id);
		} finally {
			await k.destroy();
		}
		// Someone else's token cannot be revoked from one's own page.
		const other = await request('/account/tokens?/revoke', { cookie: await signIn('engineer'), form: { id: String(id) } });
		expect(other.status).toBe(404);
		expect((await api(token, '/api/me')).status).toBe(200);
		const revoked = await request('/account/tokens?/revoke', { cookie, form: { id: String(id) } });
		expect(revoked.status).toBe(200);
		expect((await api(token, '/api/me')).status).toBe(401);
	});
});

describe('in Chromium', () => {
	let browser: Browser;
	beforeAll(async () => {
		browser = await launch();
	});
	afterAll(async () => {
		await browser?.close();
	});

	it('an admin assigns a registered chamber from the waiting list, after being told to choose a tool', async () => {
		const page = await browser.newPage({ viewport: { width: 1280, height: 800 } });
		await signInTo(page, 'admin', '/admin/structure');
		const row = page.getByTestId('waiting-WK07-D');
		await row.getByRole('button', { name: 'Assign chamber WK07-D' }).click();
		await row.getByText('Choose the tool to move it to.').waitFor();
		await row.getByLabel('Tool of WK07-D').selectOption('WK01');
		await row.getByRole('button', { name: 'Assign chamber WK07-D' }).click();
		const placed = page.getByTestId('chamber-WK07-D');
		await placed.getByText('Moved from UNASSIGNED to WK01.').waitFor();
		expect(await page.getByTestId('waiting-WK07-D').count()).toBe(0);
		await screenshot(page, 'structure-assigned');
		await page.close();
	});

	it('an engineer makes a token on their account page and sees it once', async () => {
		const page = await browser.newPage({ viewport: { width: 1280, height: 800 } });
		await signInTo(page, 'engineer', '/account/tokens');
		await page.getByRole('button', { name: 'Create token' }).click();
		await page.getByText('Name the token').waitFor();
		await page.getByLabel('Name').fill('browser-made');
		await page.getByRole('button', { name: 'Create token' }).click();
		const token = (await page.getByTestId('new-token').textContent())?.trim() ?? '';
		expect(token).toMatch(/^lst_[A-Za-z0-9_-]{43}$/);
		expect((await (await api(token, '/api/me')).json()).user.username).toBe(TEST_USERS.engineer);
		await page.reload();
		expect(await page.getByTestId('new-token').count()).toBe(0);
		await expect(page.getByText('browser-made').count()).resolves.toBeGreaterThan(0);
		await page.close();
	});
});
