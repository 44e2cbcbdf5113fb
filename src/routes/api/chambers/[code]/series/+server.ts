import { json } from '@sveltejs/kit';
import { now } from '$lib/server/time';
import { getChamberHeader, getChamberSeries, parseChamberRange, pickStep } from '$lib/server/views/chamber-view';
import type { RequestHandler } from './$types';

/** GET /api/chambers/{code}/series?step=RECIPE/step&from=&to= — T²/Q ratios, EWMA, forecast and marks. */
export const GET: RequestHandler = async ({ params, url }) => {
	const header = await getChamberHeader(params.code);
	if (!header) return json({ error: `No chamber ${params.code}.`, param: 'code' }, { status: 404 });
	const range = parseChamberRange(url.searchParams, header.latestDataAt, now());
	if (!range.ok) return json({ error: range.error, param: range.param }, { status: 400 });
	const step = await pickStep(header, url.searchParams.get('step'), range.focus);
	if (!step) return json({ error: `${params.code} has not run ${url.searchParams.get('step') ?? 'any recipe step'}.`, param: 'step' }, { status: 404 });
	const series = await getChamberSeries({ chamberId: header.chamber.id, recipeStepId: step.id, from: range.from, to: range.to });
	return json({ chamber: header.chamber.code, step, ...series }, { headers: { 'cache-control': 'no-store' } });
};
