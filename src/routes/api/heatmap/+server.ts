import { json } from '@sveltejs/kit';
import { now } from '$lib/server/time';
import { getHeatmap, parseHeatmapParams } from '$lib/server/views/heatmap';
import type { RequestHandler } from './$types';

/** GET /api/heatmap?window=24h|7d|30d&anchor=auto|now|latest&end=&area=&recipe=&step= */
export const GET: RequestHandler = async ({ url, locals }) => {
	const p = parseHeatmapParams(url.searchParams);
	if (!p.ok) return json({ error: p.error, param: p.param }, { status: 400 });
	const view = await getHeatmap(p.value, { now: now(), timeZone: locals.user?.timeZone ?? 'UTC' });
	return json(view, { headers: { 'cache-control': 'no-store' } });
};
