import { json } from '@sveltejs/kit';
import { now } from '$lib/server/time';
import { getHeatmap, parseHeatmapParams } from '$lib/server/views/heatmap';
import { answerJson } from '$lib/server/answer-cache';
import { clockZone } from '$lib/server/clock';
import type { RequestHandler } from './$types';

/**
 * How old a kept answer may be: the window can be anchored at "now", so the answer moves with the
 * clock as well as with the data (the page polls every 30 s).
 */
const MAX_AGE_MS = 5_000;

/** GET /api/heatmap?window=24h|7d|30d&anchor=auto|now|latest&end=&area=&recipe=&step= */
export const GET: RequestHandler = async ({ url, locals, cookies }) => {
	const p = parseHeatmapParams(url.searchParams);
	if (!p.ok) return json({ error: p.error, param: p.param }, { status: 400 });
	const timeZone = clockZone(cookies, locals.user);
	return answerJson(`heatmap|${timeZone}|${JSON.stringify(p.value)}`, MAX_AGE_MS, async () => ({ status: 200, value: await getHeatmap(p.value, { now: now(), timeZone }) }));
};
