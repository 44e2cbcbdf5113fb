import { json } from '@sveltejs/kit';
import { now } from '$lib/server/time';
import { getHeatmap, parseHeatmapParams } from '$lib/server/views/heatmap';
import { cachedHeatmapBody, putHeatmapBody } from '$lib/server/views/heatmap-cache';
import type { RequestHandler } from './$types';

/** How long one computed view serves identical requests (the page polls every 30 s). */
const TTL_MS = 5_000;

/** GET /api/heatmap?window=24h|7d|30d&anchor=auto|now|latest&end=&area=&recipe=&step= */
export const GET: RequestHandler = async ({ url, locals }) => {
	const p = parseHeatmapParams(url.searchParams);
	if (!p.ok) return json({ error: p.error, param: p.param }, { status: 400 });
	const timeZone = locals.user?.timeZone ?? 'UTC';
	const t = now();
	const key = `${timeZone}|${JSON.stringify(p.value)}`;
	let body = cachedHeatmapBody(key, t, TTL_MS);
	if (body === null) {
		body = JSON.stringify(await getHeatmap(p.value, { now: t, timeZone }));
		putHeatmapBody(key, t, body);
	}
	return new Response(body, { headers: { 'content-type': 'application/json', 'cache-control': 'no-store' } });
};
