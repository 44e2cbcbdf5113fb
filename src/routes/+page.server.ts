import { fabSummary, listChambers, waferCountsByChamber } from '$lib/server/fleet-structure';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async () => {
	const summary = await fabSummary();
	const until = summary.lastProcessedAt ?? Date.now();
	const counts = await waferCountsByChamber(until, 24);
	const chambers = (await listChambers()).map((c) => ({ ...c, last24h: counts.get(c.id) ?? 0 }));
	return { summary, chambers, until };
};
