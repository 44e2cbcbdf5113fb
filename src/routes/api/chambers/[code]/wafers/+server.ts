import { json } from '@sveltejs/kit';
import { answerJson, type Computed } from '$lib/server/answer-cache';
import { canonicalQuery } from '$lib/server/views/query-params';
import { getChamberHeader, type ChamberHeader } from '$lib/server/views/chamber-view';
import { chamberWafersCsvChunks, listChamberWafers, parseWaferTableParams, type WaferTableQuery } from '$lib/server/views/chamber-wafers';
import type { RequestHandler } from './$types';

/** The table follows the data (kept while it is unchanged); the age cap is a backstop. */
const MAX_AGE_MS = 60_000;

type Resolved = { ok: true; header: ChamberHeader; p: WaferTableQuery; stepId: number | null } | { ok: false; answer: Computed };

async function resolve(code: string, sp: URLSearchParams): Promise<Resolved> {
	const header = await getChamberHeader(code);
	if (!header) return { ok: false, answer: { status: 404, value: { error: `No chamber ${code}.`, param: 'code' } } };
	const p = parseWaferTableParams(sp);
	if (!p.ok) return { ok: false, answer: { status: 400, value: { error: p.error, param: p.param } } };
	let stepId: number | null = null;
	if (p.value.step) {
		const step = header.steps.find((s) => s.key === p.value.step || String(s.id) === p.value.step);
		if (!step) return { ok: false, answer: { status: 404, value: { error: `step: ${code} has not run ${p.value.step}.`, param: 'step' } } };
		stepId = step.id;
	}
	return { ok: true, header, p: p.value, stepId };
}

/**
 * GET /api/chambers/{code}/wafers?step=&from=&to=&state=&q=&sort=&dir=&page=&size= — one page of the
 * wafer table as JSON; with format=csv every filtered row as a CSV download.
 */
export const GET: RequestHandler = async ({ params, url }) => {
	if (url.searchParams.get('format') !== 'csv') {
		return answerJson(`wafers|${params.code}|${canonicalQuery(url.searchParams)}`, MAX_AGE_MS, async () => {
			const r = await resolve(params.code, url.searchParams);
			return r.ok ? { status: 200, value: await listChamberWafers(r.header.chamber.id, r.stepId, r.p) } : r.answer;
		});
	}
	const r = await resolve(params.code, url.searchParams);
	if (!r.ok) return json(r.answer.value, { status: r.answer.status });
	try {
		// Streamed a slice at a time (chamber-wafers.ts): a large export never holds the event loop.
		const { chunks } = await chamberWafersCsvChunks(r.header.chamber.code, r.header.chamber.id, r.stepId, r.p);
		const encoder = new TextEncoder();
		const body = new ReadableStream<Uint8Array>({
			async pull(controller) {
				const next = await chunks.next();
				if (next.done) controller.close();
				else controller.enqueue(encoder.encode(next.value));
			},
			async cancel() {
				await chunks.return(undefined);
			}
		});
		const name = `${r.header.chamber.code}-wafers-${new Date().toISOString().slice(0, 16).replace(/[:T]/g, '')}.csv`;
		return new Response(body, {
			headers: { 'content-type': 'text/csv; charset=utf-8', 'content-disposition': `attachment; filename="${name}"`, 'cache-control': 'no-store' }
		});
	} catch (e) {
		if (e instanceof RangeError) return json({ error: e.message, param: 'from' }, { status: 400 });
		throw e;
	}
};
