import { describe, expect, it } from 'vitest';
import { fileOutcome } from '../../../src/routes/uploads/outcome';

describe('an upload badge never contradicts the rows', () => {
	it('does not call a file with 0 of 3 rows stored "stored"', () => {
		const o = fileOutcome('done', { total: 3, accepted: 0, rejected: 3, duplicate: 0 });
		expect(o.word).not.toMatch(/^stored|done/);
		expect(o).toEqual({ word: 'nothing stored', tone: 'alarm' });
	});
	it.each([
		[{ total: 3, accepted: 3, rejected: 0, duplicate: 0 }, 'stored', 'ok'],
		[{ total: 3, accepted: 2, rejected: 1, duplicate: 0 }, 'partly stored (2 of 3)', 'warn'],
		[{ total: 3, accepted: 0, rejected: 0, duplicate: 3 }, 'nothing new', 'info'],
		[{ total: 0, accepted: 0, rejected: 0, duplicate: 0 }, 'no rows', 'warn']
	])('done with %o → %s', (rows, word, tone) => expect(fileOutcome('done', rows)).toEqual({ word, tone }));
	it('keeps the whole-file outcomes', () => {
		expect(fileOutcome('rejected', { total: 0, accepted: 0, rejected: 0 }).word).toBe('refused');
		expect(fileOutcome('duplicate', { total: 3, accepted: 0, rejected: 0 }).word).toBe('already ingested');
		expect(fileOutcome('failed', { total: 3, accepted: 0, rejected: 0 }).tone).toBe('alarm');
	});
});
