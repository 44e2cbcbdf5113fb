import { json } from '@sveltejs/kit';
import { actorOf } from '$lib/server/qualification-api';
import { parseCampaignRequest } from '$lib/server/qualification-input';
import { createCampaign, listCampaigns, QualificationError } from '$lib/server/qualifications';
import { launchCampaign } from '$lib/server/qualification-runner';
import type { RequestHandler } from './$types';

/** Start a qualification campaign: drafts are fitted in the background; poll GET /api/qualifications/{id}. */
export const POST: RequestHandler = async ({ request, locals }) => {
	let body: unknown;
	try {
		body = await request.json();
	} catch {
		return json({ error: 'The body is not valid JSON.', field: 'body' }, { status: 400 });
	}
	try {
		const req = await parseCampaignRequest(body);
		const id = await createCampaign({ ...req, createdBy: actorOf(locals) });
		launchCampaign(id);
		return json({ id }, { status: 202, headers: { location: `/api/qualifications/${id}` } });
	} catch (e) {
		if (e instanceof QualificationError) return json({ error: e.message, field: e.field ?? null }, { status: e.status });
		throw e;
	}
};

export const GET: RequestHandler = async () => json({ campaigns: await listCampaigns() }, { headers: { 'cache-control': 'no-store' } });
