import { json } from '@sveltejs/kit';
import { getChamberHeader } from '$lib/server/views/chamber-view';
import { chamberWafersCsv, listChamberWafers, parseWaferTableParams } from '$lib/server/views/chamber-wafers';
import type { RequestHandler } from './$types';

/**
 * GET /api/chambers/{code}/wafers?step=&from=&to=&state=&q=&sort=&dir=&page=&size= — one page of the
 * wafer table as JSON; with format=csv every filtered row as a CSV download.
 */
export const GET: RequestHandler = async ({ params, url }) => {
	const header = await getChamberHeader(params.code);
	if (!header) return json({ error: `No chamber ${params.code}.`, param: 'code' }, { status: 404 });
	const p = parseWaferTableParams(url.searchParams);
	if (!p.ok) return json({ error: p.error, param: p.param }, { status: 400 });
	let stepId: number | null = null;
	if (p.value.step) {
		const step = header.steps.find((s) => s.key === p.value.step || String(s.id) === p.value.step);
		if (!step) return json({ error: `step: ${params.code} has not run ${p.value.step}.`, param: 'step' }, { status: 404 });
		stepId = step.id;
	}
	if (p.value.format === 'csv') {
		try {
			const { csv } = await chamberWafersCsv(header.chamber.code, header.chamber.id, stepId, p.value);
			const name = `${header.chamber.code}-wafers-${new Date().toISOString().slice(0, 16).replace(/[:T]/g, '')}.csv`;
			return new Response(csv, {
				headers: { 'content-type': 'text/csv; charset=utf-8', 'content-disposition': `attachment; filename="${name}"`, 'cache-control': 'no-store' }
			});
		} catch (e) {
			if (e instanceof RangeError) return json({ error: e.message, param: 'from' }, { status: 400 });
			throw e;
		}
	}
	return json(await listChamberWafers(header.chamber.id, stepId, p.value), { headers: { 'cache-control': 'no-store' } });
};
