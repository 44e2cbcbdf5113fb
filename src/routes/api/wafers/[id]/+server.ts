import { json } from '@sveltejs/kit';
import { getWaferView } from '$lib/server/views/wafer-view';
import type { RequestHandler } from './$types';

/** GET /api/wafers/{id}?contrib=rbc|complete — one wafer-step with its statistics and contributions. */
export const GET: RequestHandler = async ({ params, url }) => {
	if (!/^\d{1,12}$/.test(params.id)) return json({ error: 'id: must be a wafer-step number', param: 'id' }, { status: 400 });
	const contrib = url.searchParams.get('contrib') ?? 'rbc';
	if (contrib !== 'rbc' && contrib !== 'complete') return json({ error: 'contrib: must be rbc or complete', param: 'contrib' }, { status: 400 });
	const view = await getWaferView(Number(params.id), contrib);
	if (!view) return json({ error: `No wafer-step ${params.id}.`, param: 'id' }, { status: 404 });
	return json(view, { headers: { 'cache-control': 'no-store' } });
};
