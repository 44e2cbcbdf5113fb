import fs from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../../helpers/temp-db.ts';
import { ingestFile } from '../../../src/lib/server/ingest/index.ts';
import { runInbox } from '../../../jobs/ingest-inbox.ts';
import { addChambers, count, csv, HEADER, row, rows, write } from './helpers.ts';

let env: Awaited<ReturnType<typeof useTempDb>>;
let inbox: string;
beforeAll(async () => {
	env = await useTempDb();
	await addChambers(env.k, ['PM1']);
	inbox = path.join(env.dir, 'inbox');
	fs.mkdirSync(inbox);
});
afterAll(() => env.cleanup());

const run = () => runInbox({ inboxDir: inbox, settleMs: 0, log: () => {} });

describe('inbox job', () => {
	it('moves good files to processed/ and refused ones to quarantine/, each with its report', async () => {
		write(inbox, 'good.csv', csv(HEADER, rows(5)));
		write(inbox, 'binary.csv', Buffer.from([0x00, 0x01, 0x02]));
		write(inbox, 'allbad.csv', csv(HEADER, [row(50, { chamber: 'NOPE' })]));
		write(inbox, '.hidden.csv.part', 'still being written');
		const out = await run();
		expect(out.map((o) => [o.name, o.movedTo && path.relative(inbox, o.movedTo)]).sort()).toEqual([
			['allbad.csv', 'quarantine/allbad.csv'],
			['binary.csv', 'quarantine/binary.csv'],
			['good.csv', 'processed/good.csv']
		]);
		const report = JSON.parse(fs.readFileSync(path.join(inbox, 'processed', 'good.csv.report.json'), 'utf8'));
		expect(report.rows.accepted).toBe(5);
		const bin = JSON.parse(fs.readFileSync(path.join(inbox, 'quarantine', 'binary.csv.report.json'), 'utf8'));
		expect(bin.fileError.reason).toMatch(/NUL bytes/);
		expect(fs.readdirSync(inbox).sort()).toEqual(['.hidden.csv.part', 'processed', 'quarantine']);
		expect(await count(env.k, 'wafer_steps')).toBe(5);
		expect(await run()).toEqual([]); // nothing new: nothing happens
	});

	it('a file already committed but not yet moved (crash between the two) is moved with the stored report', async () => {
		const content = csv(HEADER, rows(3, 100));
		const file = write(inbox, 'late.csv', content);
		const first = await ingestFile(file, { source: 'inbox', originalName: 'late.csv' });
		const [o] = await run();
		expect(o.report.status).toBe('duplicate');
		expect(path.relative(inbox, o.movedTo!)).toBe('processed/late.csv');
		const beside = JSON.parse(fs.readFileSync(path.join(inbox, 'processed', 'late.csv.report.json'), 'utf8'));
		expect(beside.earlierReport.fileId).toBe(first.fileId);
		expect(beside.earlierReport.rows.accepted).toBe(3);
		expect(await count(env.k, 'wafer_steps')).toBe(8);
	});

	it('a second file of the same name does not overwrite the first in processed/', async () => {
		write(inbox, 'good.csv', csv(HEADER, rows(2, 200)));
		const [o] = await run();
		expect(path.basename(o.movedTo!)).toMatch(/^good\.\d{4}-\d{2}-\d{2}-\d+Z\.csv$/);
		expect(fs.existsSync(path.join(inbox, 'processed', 'good.csv'))).toBe(true);
	});

	it('skips the inbox while another live worker holds the lock', async () => {
		write(inbox, '.inbox.lock', String(process.pid));
		write(inbox, 'wait.csv', csv(HEADER, rows(1, 300)));
		expect(await run()).toEqual([]);
		fs.rmSync(path.join(inbox, '.inbox.lock'));
		expect((await run()).map((o) => o.name)).toEqual(['wait.csv']);
	});
});
