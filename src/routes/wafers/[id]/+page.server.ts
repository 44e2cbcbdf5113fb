import { error } from '@sveltejs/kit';
import { getWaferView } from '$lib/server/views/wafer-view';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ params, url }) => {
	if (!/^\d{1,12}$/.test(params.id)) error(400, 'A wafer-step is named by its number.');
	const contrib = url.searchParams.get('contrib') === 'complete' ? 'complete' : 'rbc';
	const view = await getWaferView(Number(params.id), contrib);
	if (!view) error(404, `No wafer-step ${params.id}.`);
	return { view };
};
