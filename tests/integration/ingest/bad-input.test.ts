/**
 * The bad-input corpus (issue 4 §7): each case gets a located message, and nothing of a refused file
 * (or of a refused row) is written.
 */
import { afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import { useTempDb } from '../../helpers/temp-db.ts';
import { ingestFile, type IngestReport } from '../../../src/lib/server/ingest/index.ts';
import { addChambers, count, csv, HEADER, row, rows, write } from './helpers.ts';

let env: Awaited<ReturnType<typeof useTempDb>>;
beforeAll(async () => {
	env = await useTempDb();
	await addChambers(env.k, ['PM1']);
});
afterAll(() => env.cleanup());

let n = 0;
async function ingest(content: string | Buffer, opts: { name?: string; limitBytes?: number; maxLineBytes?: number } = {}) {
	const file = write(env.dir, opts.name ?? `case-${++n}.csv`, content);
	return ingestFile(file, { source: 'upload', limitBytes: opts.limitBytes, maxLineBytes: opts.maxLineBytes });
}

/** A refused file: status rejected, the one located error stored, and no wafer-step, recipe or feature. */
async function expectRefused(r: IngestReport, where: { line: number | null; column?: string | null }, reason: RegExp) {
	expect(r.status).toBe('rejected');
	expect(r.fileError).not.toBeNull();
	expect(r.fileError!.reason).toMatch(reason);
	expect(r.fileError!.line).toBe(where.line ?? 0);
	if (where.column !== undefined) expect(r.fileError!.column).toBe(where.column);
	expect(r.rows.accepted).toBe(0);
	expect(await count(env.k, 'wafer_steps')).toBe(0);
	expect(await count(env.k, 'recipes')).toBe(0);
	expect(await count(env.k, 'features')).toBe(0);
	const stored = await env.k('ingest_rejections').where({ ingest_file_id: r.fileId });
	expect(stored).toHaveLength(1);
	expect(stored[0].reason).toBe(r.fileError!.reason);
	expect((await env.k('ingest_files').where({ id: r.fileId }).first()).status).toBe('rejected');
}

/** A file read to the end with exactly these rows refused; the good rows stored. */
async function expectRowRejected(r: IngestReport, line: number, column: string | null, reason: RegExp, accepted = 1) {
	expect(r.status).toBe('done');
	expect(r.rows.rejected).toBe(1);
	expect(r.rows.accepted).toBe(accepted);
	const rej = r.rejections.find((x) => x.line === line);
	expect(rej, JSON.stringify(r.rejections)).toBeDefined();
	expect(rej!.column).toBe(column);
	expect(rej!.reason).toMatch(reason);
	const stored = await env.k('ingest_rejections').where({ ingest_file_id: r.fileId, line });
	expect(stored.length).toBeGreaterThan(0);
	expect(stored[0].reason).toBe(rej!.reason);
}

describe('files refused whole', () => {
	beforeEach(async () => {
		// Each case starts from an empty fab catalogue so "nothing written" is checkable.
		await env.k('ingest_rejections').delete();
		await env.k('wafer_steps').delete();
		await env.k('ingest_files').delete();
		await env.k('features').delete();
		await env.k('recipe_steps').delete();
		await env.k('recipes').delete();
	});

	it('empty file', async () => expectRefused(await ingest(''), { line: 1 }, /empty/));
	it('only blank lines', async () => expectRefused(await ingest('\n\r\n\n'), { line: 1 }, /empty/));
	it('header only', async () => expectRefused(await ingest(csv(HEADER, [])), { line: 2 }, /header but no data rows/));
	it('missing required column', async () => {
		const h = HEADER.filter((c) => c !== 'processed_at');
		const r = await ingest(csv(h, rows(2).map((x) => x.filter((_, j) => j !== 5))));
		await expectRefused(r, { line: 1, column: 'processed_at' }, /lacks the required column processed_at/);
	});
	it('duplicate column', async () => {
		const h = [...HEADER, 'pressure_mtorr'];
		await expectRefused(await ingest(csv(h, rows(2).map((x) => [...x, '1']))), { line: 1, column: 'pressure_mtorr' }, /appears twice.*columns 16 and 18/);
	});
	it('unknown delimiter (semicolons)', async () => {
		const text = [HEADER.join(';'), row(1).join(';')].join('\n');
		await expectRefused(await ingest(text), { line: 1 }, /separated by semicolons.*comma-separated/);
	});
	it('unknown delimiter (tabs)', async () => {
		await expectRefused(await ingest([HEADER.join('\t'), row(1).join('\t')].join('\n')), { line: 1 }, /separated by tabs/);
	});
	it('a badly named feature column', async () => {
		const h = HEADER.map((c) => (c === 'pressure_mtorr' ? 'Pressure (mTorr)' : c));
		await expectRefused(await ingest(csv(h, rows(1))), { line: 1, column: 'Pressure (mTorr)' }, /snake_case/);
	});
	it('binary file (NUL bytes)', async () => {
		const b = Buffer.concat([Buffer.from(csv(HEADER, rows(3))), Buffer.from([0x50, 0x4b, 0x03, 0x04, 0x00, 0x00])]);
		await expectRefused(await ingest(b), { line: 5 }, /NUL bytes.*binary/);
	});
	it('invalid UTF-8', async () => {
		const b = Buffer.concat([Buffer.from(csv(HEADER, rows(1))), Buffer.from([0x57, 0xff, 0xfe, 0x2c, 0x0a])]);
		await expectRefused(await ingest(b), { line: 3 }, /not valid UTF-8/);
	});
	it('UTF-16 file', async () => {
		await expectRefused(await ingest(Buffer.from('\uFEFF' + csv(HEADER, rows(1)), 'utf16le')), { line: 1 }, /UTF-16/);
	});
	it('over-size file', async () => {
		const text = csv(HEADER, rows(50));
		await expectRefused(await ingest(text, { limitBytes: 2048 }), { line: null }, /larger than the limit of 2 kB/);
	});
	it('over-long line', async () => {
		const long = row(2, { wafer: 'W' + 'x'.repeat(5000) });
		await expectRefused(await ingest(csv(HEADER, [row(1), long]), { maxLineBytes: 4096 }), { line: 3 }, /Line 3 is longer than 4 kB/);
	});
	it('a quoted field never closed', async () => {
		const bad = row(2);
		bad[0] = '"W2';
		await expectRefused(await ingest(csv(HEADER, [row(1), bad, row(3)])), { line: 3 }, /quoted field opened on line 3 is never closed/);
	});
	it('invalid JSON body', async () => {
		// V8 names the offending token and its context (a character position only for some errors).
		const r = await ingest('[{"wafer_id": "W1",\n "lot_id": }]', { name: 'bad.json' });
		await expectRefused(r, { line: null }, /not valid JSON: Unexpected token '}'.*"lot_id": }/);
	});
});

describe('rows refused, the rest of the file stored', () => {
	let base = 1000;
	const good = () => row(base++);

	it('non-numeric feature value', async () => {
		const bad = good();
		bad[HEADER.indexOf('pressure_mtorr')] = '15,2'.replace(',', ';');
		await expectRowRejected(await ingest(csv(HEADER, [good(), bad])), 3, 'pressure_mtorr', /pressure_mtorr is not a number/);
	});
	for (const v of ['NaN', 'Infinity', '-inf', '', '0x1F']) {
		it(`feature value "${v}"`, async () => {
			const bad = good();
			bad[HEADER.indexOf('oes_777.4')] = v;
			const r = await ingest(csv(HEADER, [good(), bad]));
			await expectRowRejected(r, 3, 'oes_777.4', /oes_777\.4 is (NaN|infinite|empty|not a (decimal )?number)/);
			expect(r.rejections[0].value).toBe(v);
		});
	}
	it('timestamp without a zone', async () => {
		await expectRowRejected(await ingest(csv(HEADER, [good(), row(base++, { at: '2026-11-01T06:00:00' })])), 3, 'processed_at', /no time zone/);
	});
	it('unparsable timestamp', async () => {
		await expectRowRejected(await ingest(csv(HEADER, [good(), row(base++, { at: '01/11/2026 06:00' })])), 3, 'processed_at', /not an ISO 8601/);
	});
	it('impossible date', async () => {
		await expectRowRejected(await ingest(csv(HEADER, [good(), row(base++, { at: '2026-02-30T06:00:00Z' })])), 3, 'processed_at', /out of range/);
	});
	it('timestamp in the future beyond the tolerance', async () => {
		const soon = new Date(Date.now() + 5 * 60_000).toISOString();
		const late = new Date(Date.now() + 3 * 3_600_000).toISOString();
		const r = await ingest(csv(HEADER, [good(), row(base++, { at: late }), row(base++, { at: soon })]));
		await expectRowRejected(r, 3, 'processed_at', /more than 10 min after the server's clock/, 2);
	});
	it('duplicate wafer × step in one file', async () => {
		const a = good();
		const r = await ingest(csv(HEADER, [a, [...a]]));
		await expectRowRejected(r, 3, 'wafer_id', new RegExp(`wafer ${a[0]} at OX-ETCH / main already appears on line 2`));
	});
	it('unknown chamber (refused by default)', async () => {
		const r = await ingest(csv(HEADER, [good(), row(base++, { chamber: 'PM9' })]));
		await expectRowRejected(r, 3, 'chamber_id', /PM9|not a known chamber/);
		expect(await env.k('chambers').where({ code: 'PM9' }).first()).toBeUndefined();
	});
	it('wrong number of fields', async () => {
		const short = good().slice(0, -2);
		await expectRowRejected(await ingest(csv(HEADER, [good(), short])), 3, null, /has 15 fields; the header has 17/);
	});
	it('argon line at zero (no actinometry ratio possible)', async () => {
		const bad = good();
		bad[HEADER.indexOf('oes_750.4')] = '0';
		await expectRowRejected(await ingest(csv(HEADER, [good(), bad])), 3, 'oes_750.4', /argon actinometer line must be positive/);
	});
	it('several bad cells in one row are all listed', async () => {
		const bad = good();
		bad[HEADER.indexOf('oes_337.1')] = 'abc';
		bad[HEADER.indexOf('rf_forward_w')] = 'NaN';
		const r = await ingest(csv(HEADER, [good(), bad]));
		expect(r.rows.rejected).toBe(1);
		expect(r.rejections.map((x) => x.column)).toEqual(['oes_337.1', 'rf_forward_w']);
	});
	it('a feature set that differs from the recipe step’s, naming the columns', async () => {
		const h = HEADER.filter((c) => c !== 'throttle_valve_pos').concat('chuck_temp_c');
		const src = good();
		const r2 = [...src.slice(0, HEADER.indexOf('throttle_valve_pos')), '20'];
		const other = row(base++, { step: 'overetch' }).filter((_, j) => j !== HEADER.indexOf('throttle_valve_pos')).concat('21');
		const r = await ingest(csv(h, [r2, other]));
		await expectRowRejected(r, 2, null, /differ from the set fixed for OX-ETCH \/ main.*not in the step's set: chuck_temp_c; missing from this file: throttle_valve_pos/);
		// a step seen for the first time in the same file takes this file's set
		expect(r.created.recipeSteps).toEqual(['OX-ETCH / overetch']);
	});
});
