import { json } from '@sveltejs/kit';
import { runFleetMatching } from '$lib/server/fleet-matching';
import { now } from '$lib/server/time';
import { MatchingRequestError, matchingAnswer, resolveSteps, runAnswer } from '$lib/server/views/matching-api';
import type { RequestHandler } from './$types';

const bad = (message: string, field?: string) => json({ error: message, ...(field ? { field } : {}) }, { status: 400 });

/** The latest fleet-matching run of one recipe step, or why there is none. */
export const GET: RequestHandler = async ({ url }) => {
	for (const key of url.searchParams.keys()) if (key !== 'recipe' && key !== 'step') return bad(`Unknown query parameter "${key}"; use recipe and step.`, key);
	const recipe = url.searchParams.get('recipe');
	const step = url.searchParams.get('step');
	if (!recipe) return bad('Name the recipe step: ?recipe=CODE&step=NAME.', 'recipe');
	try {
		const steps = await resolveSteps(recipe, step);
		if (steps.length > 1) return bad(`Recipe "${recipe}" has ${steps.length} steps (${steps.map((s) => s.step).join(', ')}); name one with &step=.`, 'step');
		return json(await matchingAnswer(steps[0]), { headers: { 'cache-control': 'no-store' } });
	} catch (e) {
		if (e instanceof MatchingRequestError) return bad(e.message);
		throw e;
	}
};

/** Run fleet matching now: `{recipe?, step?}` — one step, every step of a recipe, or every step. */
export const POST: RequestHandler = async ({ request, url, locals }) => {
	const origin = request.headers.get('origin');
	if (!locals.apiToken && origin && origin !== url.origin) return json({ error: 'Cross-origin requests are refused.' }, { status: 403 });
	let body: unknown = {};
	const text = await request.text();
	if (text.trim()) {
		try {
			body = JSON.parse(text);
		} catch (e) {
			return bad(`The body is not JSON: ${(e as Error).message}.`);
		}
	}
	if (typeof body !== 'object' || body === null || Array.isArray(body)) return bad('The body must be a JSON object {recipe?, step?}.');
	const b = body as Record<string, unknown>;
	for (const key of Object.keys(b)) if (key !== 'recipe' && key !== 'step') return bad(`Unknown field "${key}"; the body is {recipe?, step?}.`, key);
	for (const key of ['recipe', 'step'] as const)
		if (b[key] !== undefined && (typeof b[key] !== 'string' || !(b[key] as string).trim())) return bad(`"${key}" must be a non-empty string.`, key);
	try {
		const steps = await resolveSteps((b.recipe as string | undefined) ?? null, (b.step as string | undefined) ?? null);
		const at = now();
		const runs = [];
		for (const s of steps) runs.push(runAnswer(s, await runFleetMatching(s.id, at, undefined, { trigger: 'api', userId: locals.user?.id ?? null }), at));
		return json({ runs });
	} catch (e) {
		if (e instanceof MatchingRequestError) return bad(e.message);
		throw e;
	}
};
