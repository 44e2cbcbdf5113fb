import { json } from '@sveltejs/kit';
import { AlarmQueryError, listAlarmsForApi, parseAlarmQuery } from '$lib/server/alarm-list';
import type { RequestHandler } from './$types';

/** `GET /api/alarms?state=&chamber=&since=&limit=`: alarms with rule, severity, state, wafers, worst ratio and leading contributors. */
export const GET: RequestHandler = async ({ url }) => {
	try {
		return json(await listAlarmsForApi(parseAlarmQuery(url.searchParams)));
	} catch (e) {
		if (e instanceof AlarmQueryError) return json({ error: e.message, field: e.field }, { status: 400 });
		throw e;
	}
};
