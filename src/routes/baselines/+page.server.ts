import { listBaselinePairs, listFleetModels } from '$lib/server/views/baseline-view';
import { queueOptions } from '$lib/server/views/alarm-queue';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ url }) => {
	const chamber = (url.searchParams.get('chamber') ?? '').trim() || null;
	const area = (url.searchParams.get('area') ?? '').trim() || null;
	const only = url.searchParams.get('show') === 'requalify' ? 'requalify' : url.searchParams.get('show') === 'missing' ? 'missing' : 'all';
	const [pairs, fleet, options] = await Promise.all([listBaselinePairs({ chamber, area }), listFleetModels(), queueOptions()]);
	const shown = pairs.filter((p) => (only === 'requalify' ? p.requalify : only === 'missing' ? p.active === null : true));
	return {
		pairs: shown,
		counts: { all: pairs.length, requalify: pairs.filter((p) => p.requalify).length, missing: pairs.filter((p) => !p.active).length },
		fleet,
		filters: { chamber, area, show: only },
		areas: options.areas,
		chambers: options.chambers
	};
};
