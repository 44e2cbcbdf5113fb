import { fail } from '@sveltejs/kit';
import { hasRole } from '$lib/server/roles';
import { now } from '$lib/server/time';
import { submitAcknowledge, submitClose } from '$lib/server/views/alarm-forms';
import { AGE_FILTERS, STATE_FILTERS, causePareto, listQueue, parseQueueFilters, queueOptions, timeToAcknowledge } from '$lib/server/views/alarm-queue';
import { DISPOSITIONS } from '$lib/server/alarms';
import type { Actions, PageServerLoad } from './$types';

const DAY = 86_400_000;
const PERIODS = { '7d': 7, '30d': 30, '90d': 90 } as const;

export const load: PageServerLoad = async ({ url, locals }) => {
	const { filters, ignored } = parseQueueFilters(url.searchParams);
	const periodKey = (Object.keys(PERIODS) as (keyof typeof PERIODS)[]).find((p) => p === url.searchParams.get('period')) ?? '30d';
	const to = now();
	const from = to - PERIODS[periodKey] * DAY;
	const [queue, options, pareto, response] = await Promise.all([
		listQueue(filters),
		queueOptions(),
		causePareto({ from, to, area: filters.area }),
		timeToAcknowledge({ from, to })
	]);
	return {
		filters,
		ignored,
		queue,
		options,
		stateFilters: STATE_FILTERS,
		ageFilters: AGE_FILTERS,
		dispositions: DISPOSITIONS,
		period: { key: periodKey, from, to, choices: Object.keys(PERIODS) },
		pareto,
		response,
		canAct: hasRole(locals.user?.role, 'engineer'),
		now: to
	};
};

export const actions: Actions = {
	acknowledge: async ({ request, locals }) => {
		const r = await submitAcknowledge(await request.formData(), locals.user!.id);
		if (!r.ok) return fail(400, { action: 'acknowledge', errors: r.errors, values: r.values });
		return { action: 'acknowledge', message: r.message, ids: r.ids };
	},
	close: async ({ request, locals }) => {
		const r = await submitClose(await request.formData(), locals.user!.id);
		if (!r.ok) return fail(400, { action: 'close', errors: r.errors, values: r.values });
		return { action: 'close', message: r.message, ids: r.ids };
	}
};
