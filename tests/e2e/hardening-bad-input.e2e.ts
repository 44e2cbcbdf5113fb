/**
 * The bad-input corpus over HTTP against the built server (issue 7): every malformed file of
 * tests/fixtures/bad-input/ (and the generated large ones) and every malformed request is answered
 * with a clear JSON error naming the file, line and column where they apply; the server stays healthy;
 * and nothing is half-written — no wafer-step is added, no file is recorded as stored, and a request
 * refused before its body is read leaves no trace at all (a file that was read and refused is
 * recorded once, with 0 rows accepted and its located errors: that is the audit of the refusal; a
 * file whose every row was refused also leaves its recipe step's feature catalogue, see README).
 */
import fs from 'node:fs';
import http from 'node:http';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import { openDb } from '../../src/lib/server/db.ts';
import { commaFile, deepJson, deepJsonValue, overlongLine, tenThousandColumns } from '../fixtures/bad-input/generate.ts';
import { base, request, signIn } from './http.ts';
import Database from 'better-sqlite3';
import { startServer } from '../load/server.ts';

const FIX = 'tests/fixtures/bad-input';
const CHAMBER = 'E2E-PM1';
const k = () => openDb({ client: 'better-sqlite3', filename: path.join(inject('dataDir'), 'lockstep.sqlite'), connectionString: null });

let token = '';
beforeAll(async () => {
	const d = k();
	try {
		// The same test chamber as ingest.e2e.ts (created here when this file runs first).
		if (!(await d('chambers').where({ code: CHAMBER }).first())) {
			const area = (await d('areas').where({ code: 'E2E' }).first('id')) ?? (await d('areas').insert({ code: 'E2E', name: 'E2E area' }).returning('id'))[0];
			const tool = (await d('tools').where({ code: 'E2E-T1' }).first('id')) ?? (await d('tools').insert({ code: 'E2E-T1', name: 'E2E tool', area_id: area.id }).returning('id'))[0];
			await d('chambers').insert({ code: CHAMBER, name: CHAMBER, tool_id: tool.id, created_at: Date.now() });
		}
	} finally {
		await d.destroy();
	}
	const admin = await signIn('admin');
	const r = await request('/admin/tokens?/create', { cookie: admin, form: { name: 'bad-input corpus', scope: 'ingest' } });
	token = /lst_[A-Za-z0-9_-]{43}/.exec(await r.text())?.[0] ?? '';
	expect(token).not.toBe('');
});

async function counts() {
	const d = k();
	try {
		const n = async (q: ReturnType<typeof d>) => Number((await q.count({ n: '*' }).first())?.n ?? 0);
		return {
			waferSteps: await n(d('wafer_steps')),
			files: await n(d('ingest_files')),
			// a file row that stored something (a refused file is recorded with 0 rows accepted)
			stored: await n(d('ingest_files').where('rows_accepted', '>', 0)),
			features: await n(d('features')),
			recipes: await n(d('recipes'))
		};
	} finally {
		await d.destroy();
	}
}

/** A raw HTTP request (fetch would normalise the headers and body these cases need to get wrong). */
function raw(opts: { method?: string; path: string; headers: Record<string, string | Buffer>; body?: Buffer | string; end?: boolean }): Promise<{ status: number; body: string; type: string }> {
	const u = new URL(base());
	return new Promise((resolve, reject) => {
		const req = http.request({ host: u.hostname, port: u.port, path: opts.path, method: opts.method ?? 'POST', headers: opts.headers as http.OutgoingHttpHeaders }, (res) => {
			let b = '';
			res.setEncoding('utf8');
			res.on('data', (c) => (b += c));
			res.on('end', () => resolve({ status: res.statusCode ?? 0, body: b, type: String(res.headers['content-type'] ?? '') }));
			if (opts.end === false) {
				// Answered on the headers alone: do not wait for a body that will never come.
				res.on('data', () => {});
				setTimeout(() => req.destroy(), 50);
			}
		});
		req.on('error', (e) => (opts.end === false ? resolve({ status: 0, body: String(e), type: '' }) : reject(e)));
		if (opts.body !== undefined) req.write(opts.body);
		if (opts.end !== false) req.end();
	});
}

interface Case {
	name: string;
	bytes: () => Buffer;
	type?: string;
	fileName?: string;
	status: number;
	error: RegExp;
	/** expected location (null: the location does not apply to this error) */
	line?: number | null;
	column?: string | null;
	/** refused before the body was read: no ingest_files row either */
	noTrace?: boolean;
}

const file = (n: string) => () => fs.readFileSync(path.join(FIX, n));
const CSV_HEADER = 'wafer_id,lot_id,chamber_id,recipe,step,processed_at,oes_750.4,oes_777.4,pressure_mtorr';
const goodRow = (w: string) => `${w},LBAD,${CHAMBER},BAD-ETCH,main,2026-11-02T06:00:00Z,1200.5,812.5,15.2`;

const FILE_CASES: Case[] = [
	{ name: 'empty file', bytes: file('empty.csv'), status: 400, error: /empty/i, line: 1 },
	{ name: 'only blank lines', bytes: file('blank-lines.csv'), status: 400, error: /empty/i, line: 1 },
	{ name: 'header only', bytes: file('header-only.csv'), status: 400, error: /no data rows/, line: 2 },
	{ name: 'missing required column', bytes: file('missing-column.csv'), status: 400, error: /chamber_id/, line: 1 },
	{ name: 'duplicate column', bytes: file('duplicate-column.csv'), status: 400, error: /appears twice/, line: 1 },
	{ name: 'semicolon-separated', bytes: file('semicolons.csv'), status: 400, error: /semicolon/i, line: 1 },
	{ name: 'tab-separated', bytes: file('tabs.csv'), status: 400, error: /tab/i, line: 1 },
	{ name: 'badly named feature column', bytes: file('bad-feature-name.csv'), status: 400, error: /Temp Chuck!/, line: 1 },
	{ name: 'empty column name', bytes: file('empty-column-name.csv'), status: 400, error: /no name/, line: 1, column: 'column 10' },
	{ name: 'no feature column', bytes: file('no-feature-columns.csv'), status: 400, error: /no feature column/, line: 1 },
	{ name: 'NUL bytes (binary)', bytes: file('nul-bytes.csv'), status: 400, error: /binary/i, line: 3 },
	{ name: 'a ZIP renamed to .csv', bytes: file('zip-renamed.csv'), fileName: 'wafers.csv', status: 400, error: /binary|ZIP|not a text/i, line: 1 },
	{ name: 'invalid UTF-8', bytes: file('invalid-utf8.csv'), status: 400, error: /UTF-8/, line: 2 },
	{ name: 'UTF-16 file', bytes: file('utf16.csv'), status: 400, error: /UTF-16/, line: 1 },
	{ name: 'quoted field never closed', bytes: file('unclosed-quote.csv'), status: 400, error: /quote/i, line: 2 },
	{ name: '10,000 columns', bytes: tenThousandColumns, status: 400, error: /10006 columns|10,006 columns|at most 4096/, line: 1 },
	{ name: 'a 1.5 MB line', bytes: overlongLine, status: 400, error: /line/i, line: 2 },
	{ name: 'invalid JSON', bytes: file('invalid.json'), type: 'application/json', fileName: 'invalid.json', status: 400, error: /not valid JSON/, line: 1 },
	{ name: 'JSON nested 100,000 deep', bytes: deepJson, type: 'application/json', fileName: 'deep.json', status: 400, error: /nested more than 32 levels deep.*array of rows/i },
	// refused before JSON.parse since issue 13 (a 19 MB body nested 5,000,000 deep held the server 6 s)
	{ name: 'JSON value nested 10,000 deep', bytes: deepJsonValue, type: 'application/json', fileName: 'deep-value.json', status: 400, error: /nested more than 32 levels deep/, line: 1 },
	{ name: 'JSON rows that are not objects', bytes: file('rows-not-objects.json'), type: 'application/json', fileName: 'rows.json', status: 400, error: /not an object/, line: 1 },
	{ name: 'JSON with no rows', bytes: file('empty-rows.json'), type: 'application/json', fileName: 'empty.json', status: 400, error: /no rows/ },
	{ name: 'JSON that is not rows', bytes: file('not-rows.json'), type: 'application/json', fileName: 'string.json', status: 400, error: /array of rows/ }
];

// Read to the end, every row refused: 422 with the first rejection located and each one in the report.
const ROW_CASES: Case[] = [
	{ name: 'non-numeric feature values', bytes: file('non-numeric.csv'), status: 422, error: /0 of 2 rows|rejected/, line: 2, column: 'oes_777.4' },
	{ name: 'timestamp without a zone', bytes: file('no-zone.csv'), status: 422, error: /rejected/, line: 2, column: 'processed_at' },
	{ name: 'impossible date', bytes: file('impossible-date.csv'), status: 422, error: /rejected/, line: 2, column: 'processed_at' },
	{ name: 'timestamp far in the future', bytes: file('future.csv'), status: 422, error: /rejected/, line: 2, column: 'processed_at' },
	{ name: 'unknown chamber', bytes: file('unknown-chamber.csv'), status: 422, error: /rejected/, line: 2, column: 'chamber_id' },
	{ name: 'wrong number of fields', bytes: file('wrong-field-count.csv'), status: 422, error: /rejected/, line: 2 },
];

async function expectNothingWritten(before: Awaited<ReturnType<typeof counts>>, noTrace: boolean) {
	const after = await counts();
	expect(after.waferSteps).toBe(before.waferSteps);
	expect(after.stored).toBe(before.stored);
	if (noTrace) expect(after.features).toBe(before.features);
	if (noTrace) expect(after.files).toBe(before.files);
	expect((await fetch(`${base()}/api/health`)).status).toBe(200);
}

describe('bad files over POST /api/ingest', () => {
	for (const c of [...FILE_CASES, ...ROW_CASES]) {
		it(`${c.name} → ${c.status} with a located error`, async () => {
			const before = await counts();
			const name = c.fileName ?? `${c.name.replace(/[^a-z0-9]+/gi, '-')}.csv`;
			const r = await fetch(`${base()}/api/ingest?name=${encodeURIComponent(name)}`, {
				method: 'POST',
				body: c.bytes() as unknown as BodyInit,
				headers: { authorization: `Bearer ${token}`, 'content-type': c.type ?? 'text/csv' }
			});
			const body = await r.json();
			expect(r.status, JSON.stringify(body).slice(0, 400)).toBe(c.status);
			expect(body.error).toMatch(c.error);
			expect(body.location.file).toBe(name);
			if (c.line !== undefined) expect(body.location.line).toBe(c.line);
			if (c.column !== undefined) expect(body.location.column).toBe(c.column);
			if (c.status === 422) {
				expect(body.report.rows.accepted).toBe(0);
				expect(body.report.rejections.length).toBeGreaterThan(0);
				for (const rej of body.report.rejections) expect(rej.line).toBeGreaterThan(0);
			}
			await expectNothingWritten(before, false);
		});
	}
});

describe('bad requests to POST /api/ingest', () => {
	const auth = () => ({ authorization: `Bearer ${token}` });
	const csv = `${CSV_HEADER}\n${goodRow('B1')}\n`;

	for (const [label, type] of [
		['application/xml', 'application/xml'],
		['text/plain', 'text/plain'],
		['no content type', ''],
		['an empty multipart body', 'multipart/form-data; boundary=x']
	] as const) {
		it(`${label} → 415 naming the accepted types`, async () => {
			const before = await counts();
			// Same-origin, so that SvelteKit's own form-encoding CSRF check (tested below) does not answer first.
			const headers: Record<string, string> = { ...auth(), origin: base() };
			if (type) headers['content-type'] = type;
			const r = await raw({ path: '/api/ingest?name=x.csv', headers, body: type.startsWith('multipart') ? '--x--\r\n' : csv });
			expect(r.status).toBe(415);
			expect(r.type).toMatch(/application\/json/);
			expect(JSON.parse(r.body).error).toMatch(/text\/csv or application\/json/);
			await expectNothingWritten(before, true);
		});
	}

	it('a form encoding without an Origin is refused by the CSRF check (403) before Lockstep reads it', async () => {
		const before = await counts();
		const r = await raw({ path: '/api/ingest?name=x.csv', headers: { ...auth(), 'content-type': 'text/plain' }, body: csv });
		expect(r.status).toBe(403);
		expect(r.body).toMatch(/Cross-site/i);
		await expectNothingWritten(before, true);
	});

	it('a huge Content-Length with a small body → 413 on the header alone', async () => {
		const before = await counts();
		const r = await raw({ path: '/api/ingest?name=huge.csv', headers: { ...auth(), 'content-type': 'text/csv', 'content-length': String(50 * 1024 ** 3) }, body: 'wafer_id', end: false });
		expect(r.status).toBe(413);
		await expectNothingWritten(before, true);
	});

	it('oversize request headers → 431 from the HTTP server, which keeps serving', async () => {
		const before = await counts();
		// Node's HTTP parser stops at the limit and the server answers 431; a client still writing a body
		// may see the reset instead.
		const r = await raw({ path: '/api/ingest', headers: { ...auth(), 'content-type': 'text/csv', 'x-padding': 'a'.repeat(64 * 1024) }, body: csv }).catch((e: Error) => ({ status: 0, body: String(e), type: '' }));
		if (r.status === 0) expect(r.body).toMatch(/ECONNRESET|EPIPE/);
		else expect(r.status).toBe(431);
		// Headers alone (no body to be cut off): the answer says which limit, as JSON (scripts/serve.js).
		const g = await raw({ method: 'GET', path: '/api/health', headers: { 'x-padding': 'a'.repeat(64 * 1024) } });
		expect(g.status).toBe(431);
		expect(g.type).toMatch(/application\/json/);
		expect(JSON.parse(g.body).error).toMatch(/^headers: .*exceed 16 KB/);
		expect((await fetch(`${base()}/api/health`)).status).toBe(200);
		await expectNothingWritten(before, true);
	});

	it('a path trick in the file name is stored as the bare name and nothing is written outside the data folder', async () => {
		const before = await counts();
		const r = await fetch(`${base()}/api/ingest?name=${encodeURIComponent('../../etc/passwd.csv')}`, { method: 'POST', body: csv, headers: { ...auth(), 'content-type': 'text/csv' } });
		const body = await r.json();
		expect(r.status, JSON.stringify(body)).toBe(200);
		expect(body.fileName).toBe('passwd.csv');
		const d = k();
		try {
			expect((await d('ingest_files').where({ id: body.fileId }).first()).original_name).toBe('passwd.csv');
		} finally {
			await d.destroy();
		}
		expect((await counts()).waferSteps).toBe(before.waferSteps + 1);
	});

	it('a Windows path trick in the file name of a bad file is reported under the bare name', async () => {
		const r = await fetch(`${base()}/api/ingest?name=${encodeURIComponent('..\\..\\windows\\win.ini')}`, { method: 'POST', body: '', headers: { ...auth(), 'content-type': 'text/csv' } });
		expect(r.status).toBe(400);
		expect((await r.json()).location.file).toBe('win.ini');
	});

	it('a file name that is not UTF-8 (raw bytes in X-File-Name, bad percent-encoding in ?name=) is answered and shown as text', async () => {
		const a = await raw({ path: '/api/ingest', headers: { ...auth(), 'content-type': 'text/csv', 'x-file-name': Buffer.from([0x63, 0x61, 0x66, 0xe9, 0xff, 0x2e, 0x63, 0x73, 0x76]).toString('latin1') }, body: '' });
		expect(a.status).toBe(400);
		const ja = JSON.parse(a.body);
		expect(ja.error).toMatch(/empty/i);
		expect(typeof ja.location.file).toBe('string');
		expect(ja.location.file).toMatch(/\.csv$/);
		const b = await raw({ path: '/api/ingest?name=%FF%FE%00.csv', headers: { ...auth(), 'content-type': 'text/csv' }, body: '' });
		expect(b.status).toBe(400);
		const jb = JSON.parse(b.body);
		expect(jb.location.file).not.toMatch(/\u0000/);
		expect(jb.location.file).toMatch(/\.csv$/);
	});

	it('GET on the ingest endpoint → 405; an empty bearer token → 401', async () => {
		const g = await fetch(`${base()}/api/ingest`, { headers: auth() });
		expect(g.status).toBe(405);
		const e = await raw({ path: '/api/ingest', headers: { authorization: 'Bearer ', 'content-type': 'text/csv' }, body: csv });
		expect([401, 403]).toContain(e.status);
	});
});

describe('issue 13: amplification, stalls and 500s', () => {
	const auth = () => ({ authorization: `Bearer ${token}` });

	it('a 2 MB file of 77,000 empty lines: refused after 1,000 lines with at most 1,001 rejections stored; its repeat answered from the refusal', async () => {
		const d = k();
		try {
			const rejBefore = Number((await d('ingest_rejections').count({ n: '*' }).first())?.n);
			const post = () => fetch(`${base()}/api/ingest?name=commas.csv`, { method: 'POST', body: commaFile() as unknown as BodyInit, headers: { ...auth(), 'content-type': 'text/csv' } });
			const r = await post();
			const body = await r.json();
			expect(r.status).toBe(400);
			expect(body.error).toMatch(/first 1,000 lines were all refused/);
			expect(body.report.rejectionCounts[0].count).toBe(1000);
			const rejAfter = Number((await d('ingest_rejections').count({ n: '*' }).first())?.n);
			expect(rejAfter - rejBefore).toBeLessThanOrEqual(1001);
			const files = Number((await d('ingest_files').count({ n: '*' }).first())?.n);
			const again = await post();
			const b2 = await again.json();
			expect(again.status).toBe(400);
			expect(b2.report.duplicateOfFileId).toBe(body.report.fileId);
			expect(Number((await d('ingest_files').count({ n: '*' }).first())?.n)).toBe(files);
		} finally {
			await d.destroy();
		}
	});

	it('a 10 MB JSON nested 5,000,000 deep (in short lines) is refused before it is parsed, and the server stays quick', async () => {
		// in lines of 1,000 brackets, so no line passes the 1 MB line limit (which refuses one long line first)
		const lines = 5_000;
		const body = Buffer.from(`{"rows":\n${`${'['.repeat(1000)}\n`.repeat(lines)}${`${']'.repeat(1000)}\n`.repeat(lines)}}`);
		const post = fetch(`${base()}/api/ingest?name=deep.json`, { method: 'POST', body, headers: { ...auth(), 'content-type': 'application/json' } });
		// health answers while the body is checked (before: one JSON.parse held the server 6 s)
		const t = performance.now();
		const r = await post;
		expect(r.status).toBe(400);
		expect((await r.json()).error).toMatch(/nested more than 32 levels deep/);
		expect(performance.now() - t).toBeLessThan(5_000);
	});

	it('a chunked upload past the size limit gets 413 with a reason, not a reset (a second server with a 1 MB limit)', async () => {
		const s = await startServer(inject('dataDir'), { LOCKSTEP_UPLOAD_LIMIT_MB: '1' });
		try {
			const u = new URL(s.base);
			const answer = await new Promise<{ status: number; body: string }>((resolve, reject) => {
				const req = http.request({ host: u.hostname, port: u.port, path: '/api/ingest?name=big.csv', method: 'POST', headers: { ...auth(), 'content-type': 'text/csv', 'transfer-encoding': 'chunked' } }, (res) => {
					let b = '';
					res.setEncoding('utf8');
					res.on('data', (c) => (b += c));
					res.on('end', () => resolve({ status: res.statusCode ?? 0, body: b }));
				});
				req.on('error', reject);
				const line = `${goodRow('CHUNK')}\n`;
				const chunk = Buffer.from(line.repeat(Math.ceil(64 * 1024 / line.length)));
				let sent = 0;
				const pump = () => {
					while (sent < 3 * 1024 * 1024) {
						sent += chunk.length;
						if (!req.write(chunk)) return req.once('drain', pump);
					}
					req.end();
				};
				req.write(`${CSV_HEADER}\n`);
				pump();
			});
			expect(answer.status).toBe(413);
			expect(JSON.parse(answer.body).error).toMatch(/larger than the limit of 1 MB/);
		} finally {
			await s.stop();
		}
	});

	it('option lookups with prototype names answer 400 with a reason (acknowledge, maintenance, cause code)', async () => {
		const engineer = await signIn('engineer');
		const admin = await signIn('admin');
		const d = k();
		let alarmId = '';
		let chamberId = '';
		let cause = '';
		try {
			alarmId = String((await d('alarms').where({ state: 'open' }).first('id'))?.id ?? '');
			chamberId = String((await d('chambers').first('id')).id);
			cause = String((await d('cause_codes').where({ active: true }).first('code')).code);
		} finally {
			await d.destroy();
		}
		expect(alarmId).not.toBe('');
		for (const disposition of ['constructor', '__proto__', 'toString']) {
			const r = await request('/alarms?/acknowledge', { cookie: engineer, form: { alarmId, causeCode: cause, disposition, comment: '' } });
			expect(r.status, disposition).toBe(400);
			expect(await r.text()).toContain('Choose a disposition.');
		}
		for (const kind of ['constructor', '__proto__', 'toString']) {
			const r = await request('/maintenance?/log', { cookie: engineer, form: { chamberId, kind, at: '2026-11-20 14:30', comment: '' } });
			expect(r.status, kind).toBe(400);
			expect(await r.text()).toContain('Choose a kind of maintenance.');
		}
		for (const category of ['constructor', '__proto__', 'toString']) {
			const r = await request('/admin/cause-codes?/add', { cookie: admin, form: { code: 'PROTO-1', title: 'Prototype', category } });
			expect(r.status, category).toBe(400);
			expect(await r.text()).toContain('Choose a category.');
		}
	});

	it('an out-of-range end on /api/heatmap and an empty to= on a chamber page are not 500s', async () => {
		const viewer = await signIn('viewer');
		const h = await request('/api/heatmap?end=99999999999999999', { cookie: viewer });
		expect(h.status).toBe(400);
		expect((await h.json()).error).toMatch(/from 1970 to 9999/);
		const c = await request(`/chambers/${CHAMBER}?to=`, { cookie: viewer });
		expect(c.status).toBeLessThan(500);
		const far = await request(`/chambers/${CHAMBER}?to=99999999999999999`, { cookie: viewer });
		expect(far.status).toBe(400);
	});

	it('health is not ok while the database cannot be written (another connection holds the write lock)', async () => {
		const conn = new Database(path.join(inject('dataDir'), 'lockstep.sqlite'));
		try {
			conn.exec('BEGIN IMMEDIATE');
			const r = await fetch(`${base()}/api/health`);
			expect(r.status).toBe(503);
			expect((await r.json()).error).toMatch(/cannot be written/);
		} finally {
			conn.exec('ROLLBACK');
			conn.close();
		}
		expect((await fetch(`${base()}/api/health`)).status).toBe(200);
	}, 30_000);
});

afterAll(async () => {
	// The server is still healthy after the whole corpus.
	expect((await fetch(`${base()}/api/health`)).status).toBe(200);
});
