import { json } from '@sveltejs/kit';
import { campaignAnswer } from '$lib/server/qualification-api';
import { getCampaign } from '$lib/server/qualifications';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = async ({ params }) => {
	const id = Number(params.id);
	const found = Number.isInteger(id) && id > 0 ? await getCampaign(id) : null;
	if (!found) return json({ error: `No qualification campaign ${params.id}.`, field: 'id' }, { status: 404 });
	return json(campaignAnswer(found), { headers: { 'cache-control': 'no-store' } });
};
