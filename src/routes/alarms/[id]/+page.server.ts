import { error } from '@sveltejs/kit';
import { DISPOSITIONS } from '$lib/server/alarms';
import { hasRole } from '$lib/server/roles';
import { acknowledgeAction, closeAction } from '$lib/server/views/alarm-forms';
import { getAlarm, queueOptions } from '$lib/server/views/alarm-queue';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ params, locals }) => {
	const id = Number(params.id);
	if (!Number.isInteger(id) || id <= 0) error(404, `No alarm "${params.id}".`);
	const found = await getAlarm(id);
	if (!found) error(404, `No alarm #${id}.`);
	return { ...found, causeCodes: (await queueOptions()).causeCodes, dispositions: DISPOSITIONS, canAct: hasRole(locals.user?.role, 'engineer') };
};

export const actions: Actions = {
	acknowledge: acknowledgeAction,
	close: closeAction
};
