import { error } from '@sveltejs/kit';
import { now } from '$lib/server/time';
import { getChamberHeader, getChamberSeries, parseChamberRange, pickStep } from '$lib/server/views/chamber-view';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ params, url }) => {
	const header = await getChamberHeader(params.code);
	if (!header) error(404, `No chamber ${params.code}.`);
	const range = parseChamberRange(url.searchParams, header.latestDataAt, now());
	if (!range.ok) error(400, range.error);
	const step = await pickStep(header, url.searchParams.get('step'), range.focus);
	if (url.searchParams.get('step') && !step) error(404, `${params.code} has not run ${url.searchParams.get('step')}.`);
	const series = step ? await getChamberSeries({ chamberId: header.chamber.id, recipeStepId: step.id, from: range.from, to: range.to }) : null;
	return { header, step, range: { from: range.from, to: range.to }, focus: range.focus, series, now: now() };
};
