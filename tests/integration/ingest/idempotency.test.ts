import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../../helpers/temp-db.ts';
import { ingestFile } from '../../../src/lib/server/ingest/index.ts';
import { addChambers, count, csv, HEADER, row, rows, write } from './helpers.ts';

let env: Awaited<ReturnType<typeof useTempDb>>;
beforeAll(async () => {
	env = await useTempDb();
	await addChambers(env.k, ['PM1']);
});
afterAll(() => env.cleanup());

describe('ingest: idempotency', () => {
	it('the same file twice is a no-op that the report states', async () => {
		const file = write(env.dir, 'a.csv', csv(HEADER, rows(10)));
		const first = await ingestFile(file, { source: 'inbox' });
		expect(first.rows.accepted).toBe(10);
		const again = await ingestFile(file, { source: 'upload', originalName: 'a-again.csv' });
		expect(again.status).toBe('duplicate');
		expect(again.duplicateOfFileId).toBe(first.fileId);
		expect(again.summary).toMatch(/already ingested \(file #\d+\); nothing changed/);
		expect(await count(env.k, 'wafer_steps')).toBe(10);
		expect(await count(env.k, 'ingest_files')).toBe(1);
	});

	it('the same wafer × step with the same content in a second file is a duplicate; with other values it is refused as a conflict', async () => {
		const before = await env.k('wafer_steps').where({ wafer_id: 'W00003' }).first();
		const changed = row(3, { values: Array(10).fill(1) });
		const file = write(env.dir, 'b.csv', csv(HEADER, [changed, row(10), row(11), row(4)]));
		const r = await ingestFile(file, { source: 'inbox' });
		expect(r.status).toBe('done');
		expect(r.rows).toEqual({ total: 4, accepted: 2, rejected: 1, duplicate: 1 });
		expect(r.duplicates).toEqual([{ line: 5, waferId: 'W00004', recipe: 'OX-ETCH', step: 'main', storedByFileId: before.ingest_file_id }]);
		expect(r.rejections).toHaveLength(1);
		expect(r.rejections[0]).toMatchObject({ line: 2, column: 'wafer_id', value: 'W00003' });
		expect(r.rejections[0].reason).toMatch(/already stored \(file #\d+\) with other content — oes_337\.1 1 ≠ stored /);
		const after = await env.k('wafer_steps').where({ wafer_id: 'W00003' }).first();
		expect(Buffer.compare(after.feature_values, before.feature_values)).toBe(0);
		expect(await count(env.k, 'wafer_steps')).toBe(12);
	});

	it('a file with rejected rows may be sent again once fixed elsewhere: stored rows are duplicates, the rest retried', async () => {
		const file = write(env.dir, 'c.csv', csv(HEADER, [row(20), row(21, { chamber: 'PM2' })]));
		const first = await ingestFile(file, { source: 'inbox' });
		expect(first.rows).toMatchObject({ accepted: 1, rejected: 1 });
		await addChambersLater();
		const second = await ingestFile(file, { source: 'inbox' });
		expect(second.status).toBe('done');
		expect(second.rows).toMatchObject({ accepted: 1, rejected: 0, duplicate: 1 });
		expect(await env.k('wafer_steps').whereIn('wafer_id', ['W00020', 'W00021']).count({ n: '*' }).first()).toEqual({ n: 2 });
	});
});

async function addChambersLater() {
	const tool = await env.k('tools').first('id');
	await env.k('chambers').insert({ code: 'PM2', name: 'PM2', tool_id: tool.id, created_at: Date.now() });
}
