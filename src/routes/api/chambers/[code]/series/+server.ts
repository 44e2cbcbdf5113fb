import { now } from '$lib/server/time';
import { answerJson, type Computed } from '$lib/server/answer-cache';
import { canonicalQuery } from '$lib/server/views/query-params';
import { getChamberHeader, getChamberSeries, parseChamberRange, pickStep } from '$lib/server/views/chamber-view';
import type { RequestHandler } from './$types';

/** The answer follows the data (kept while it is unchanged); the age cap covers ranges open towards now. */
const MAX_AGE_MS = 60_000;

async function series(code: string, sp: URLSearchParams): Promise<Computed> {
	const header = await getChamberHeader(code);
	if (!header) return { status: 404, value: { error: `No chamber ${code}.`, param: 'code' } };
	const range = parseChamberRange(sp, header.latestDataAt, now());
	if (!range.ok) return { status: 400, value: { error: range.error, param: range.param } };
	const step = await pickStep(header, sp.get('step'), range.focus);
	if (!step) return { status: 404, value: { error: `${code} has not run ${sp.get('step') ?? 'any recipe step'}.`, param: 'step' } };
	const s = await getChamberSeries({ chamberId: header.chamber.id, recipeStepId: step.id, from: range.from, to: range.to });
	return { status: 200, value: { chamber: header.chamber.code, step, ...s } };
}

/** GET /api/chambers/{code}/series?step=RECIPE/step&from=&to= — T²/Q ratios, EWMA, forecast and marks. */
export const GET: RequestHandler = async ({ params, url }) =>
	answerJson(`series|${params.code}|${canonicalQuery(url.searchParams)}`, MAX_AGE_MS, () => series(params.code, url.searchParams));
