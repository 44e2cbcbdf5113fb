import { json } from '@sveltejs/kit';
import { actorOf } from '$lib/server/qualification-api';
import { approveCampaign, QualificationError } from '$lib/server/qualifications';
import { launchRescore } from '$lib/server/qualification-runner';
import type { RequestHandler } from './$types';

/**
 * Approve a campaign's drafts (`baselineIds`, or by default every draft without warnings), then
 * rescore each approved chamber × step since its golden window began, in the background.
 */
export const POST: RequestHandler = async ({ params, request, locals }) => {
	const id = Number(params.id);
	if (!Number.isInteger(id) || id <= 0) return json({ error: `No qualification campaign ${params.id}.`, field: 'id' }, { status: 404 });
	let body: Record<string, unknown> = {};
	const text = await request.text();
	if (text.trim()) {
		try {
			const parsed = JSON.parse(text);
			if (typeof parsed !== 'object' || parsed === null || Array.isArray(parsed)) throw new Error();
			body = parsed;
		} catch {
			return json({ error: 'The body must be a JSON object (or empty).', field: 'body' }, { status: 400 });
		}
	}
	const ids = body.baselineIds;
	if (ids !== undefined && (!Array.isArray(ids) || ids.some((x) => !Number.isInteger(x) || x <= 0)))
		return json({ error: 'baselineIds must be a list of baseline ids (whole numbers).', field: 'baselineIds' }, { status: 400 });
	const approver = actorOf(locals);
	if (!approver) return json({ error: 'Approving needs a person: sign in, or use a personal API token.', field: 'approver' }, { status: 403 });
	try {
		const r = await approveCampaign(id, approver, ids as number[] | undefined);
		const rescoreTaskId = r.approved.length ? launchRescore(id, approver) : null;
		return json({ ...r, rescoreTaskId });
	} catch (e) {
		if (e instanceof QualificationError) return json({ error: e.message, field: e.field ?? null }, { status: e.status });
		throw e;
	}
};
