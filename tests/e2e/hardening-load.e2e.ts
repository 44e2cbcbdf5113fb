/**
 * The load script's quick mode in CI (issue 7): a server of its own over a copy of the e2e database,
 * 10 signed-in sessions on the heatmap, chamber and wafer APIs for 10 s while the inbox job ingests
 * generated files. Asserts no error and no non-2xx answer, every file stored, the server healthy
 * afterwards — not latency, which `npm run load` (full mode, by hand) reports against its target.
 */
import { describe, expect, inject, it } from 'vitest';
import { formatLoad, runLoad } from '../../scripts/load.ts';

describe('load (quick mode)', () => {
	it('answers every request with a 2xx while ingesting', async () => {
		const r = await runLoad({ quick: true, fromDataDir: inject('dataDir'), log: () => {} });
		console.log(formatLoad(r));
		expect(r.all.requests).toBeGreaterThan(100);
		for (const a of r.apis) expect(a.requests, a.api).toBeGreaterThan(0);
		expect(r.all.errors).toBe(0);
		expect(r.all.non2xx).toBe(0);
		expect(r.healthAfter).toBe(200);
		expect(r.ingest.files).toBeGreaterThan(0);
		expect(r.ingest.statuses.every((s) => s.endsWith(': done'))).toBe(true);
		expect(r.ingest.scored).toBe(r.ingest.waferSteps);
	}, 120_000);
});
