import { hasRole } from '$lib/server/roles';
import { now } from '$lib/server/time';
import { acknowledgeAction, closeAction } from '$lib/server/views/alarm-forms';
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
	acknowledge: acknowledgeAction,
	close: closeAction
};
