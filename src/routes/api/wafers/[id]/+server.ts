import { json } from '@sveltejs/kit';
import { getWaferView } from '$lib/server/views/wafer-view';
import { answerJson } from '$lib/server/answer-cache';
import type { RequestHandler } from './$types';

/** A wafer-step's answer changes only with the data (a rescore, an alarm's state); the age cap is a backstop. */
const MAX_AGE_MS = 60_000;

/** GET /api/wafers/{id}?contrib=rbc|complete — one wafer-step with its statistics and contributions. */
export const GET: RequestHandler = async ({ params, url }) => {
	if (!/^\d{1,12}$/.test(params.id)) return json({ error: 'id: must be a wafer-step number', param: 'id' }, { status: 400 });
	const contrib = url.searchParams.get('contrib') ?? 'rbc';
	if (contrib !== 'rbc' && contrib !== 'complete') return json({ error: 'contrib: must be rbc or complete', param: 'contrib' }, { status: 400 });
	const id = Number(params.id);
	return answerJson(`wafer|${id}|${contrib}`, MAX_AGE_MS, async () => {
		const view = await getWaferView(id, contrib);
		return view ? { status: 200, value: view } : { status: 404, value: { error: `No wafer-step ${params.id}.`, param: 'id' } };
	});
};
