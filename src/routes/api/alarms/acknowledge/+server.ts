import { json } from '@sveltejs/kit';
import { parseAcknowledgeBody } from '$lib/server/alarm-ack-api';
import { acknowledgeAlarms, AlarmError } from '$lib/server/alarms';
import { db } from '$lib/server/db';
import type { RequestHandler } from './$types';

/**
 * `POST /api/alarms/acknowledge` `{alarmIds, cause, disposition, comment}`: the queue's acknowledgement
 * (all or nothing), recorded as the signed-in engineer. A disposition is a recommendation to the fab's
 * own procedure; Lockstep never acts on a tool.
 */
export const POST: RequestHandler = async ({ request, url, locals }) => {
	// SvelteKit's origin check covers form encodings only; a session caller must also be same-origin.
	const origin = request.headers.get('origin');
	if (origin && origin !== url.origin) return json({ error: 'Cross-origin requests are refused.', field: null }, { status: 403 });
	if (!locals.user) return json({ error: 'Acknowledging needs a signed-in engineer: it is recorded as that person.', field: null }, { status: 401 });
	let body: unknown;
	try {
		body = await request.json();
	} catch {
		return json({ error: 'The body must be JSON: {"alarmIds": [..], "cause": "..", "disposition": "..", "comment": ".."}.', field: null }, { status: 400 });
	}
	const parsed = parseAcknowledgeBody(body);
	if (!parsed.ok) return json({ error: parsed.error, field: parsed.field }, { status: 400 });
	try {
		const r = await acknowledgeAlarms(db(), { ...parsed.value, userId: locals.user.id });
		return json(r);
	} catch (e) {
		if (e instanceof AlarmError) return json({ error: e.message, field: e.field === 'causeCode' ? 'cause' : (e.field ?? null) }, { status: 400 });
		throw e;
	}
};
