import { error } from '@sveltejs/kit';
import { DISPOSITIONS } from '$lib/server/alarms';
import { listCauseCodes } from '$lib/server/cause-codes';
import { hasRole } from '$lib/server/roles';
import { acknowledgeAction } from '$lib/server/views/alarm-forms';
import { getWaferView } from '$lib/server/views/wafer-view';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ params, url, locals }) => {
	if (!/^\d{1,12}$/.test(params.id)) error(400, 'A wafer-step is named by its number.');
	const contrib = url.searchParams.get('contrib') === 'complete' ? 'complete' : 'rbc';
	const view = await getWaferView(Number(params.id), contrib);
	if (!view) error(404, `No wafer-step ${params.id}.`);
	const canAcknowledge = hasRole(locals.user?.role, 'engineer');
	return {
		view,
		canAcknowledge,
		causeCodes: canAcknowledge ? await listCauseCodes({ activeOnly: true }) : [],
		dispositions: DISPOSITIONS
	};
};

export const actions: Actions = {
	/** Acknowledge the live alarms this wafer belongs to, from the wafer page (same rules as the queue). */
	acknowledge: acknowledgeAction
};
