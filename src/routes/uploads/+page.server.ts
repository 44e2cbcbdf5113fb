import { error } from '@sveltejs/kit';
import { config } from '$lib/server/config';
import { getFileReport, listRecentFiles } from '$lib/server/ingest/files';
import { REQUIRED_COLUMNS } from '$lib/server/ingest/columns';
import { listFeatureSetProposals } from '$lib/server/ingest/feature-sets';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ url }) => {
	const raw = url.searchParams.get('file');
	let selected = null;
	if (raw !== null) {
		const id = Number(raw);
		if (!Number.isInteger(id) || id < 1) error(400, 'file must be a file number');
		selected = await getFileReport(id);
		if (!selected) error(404, `No ingested file #${id}.`);
	}
	return {
		limitBytes: config.uploadLimitBytes,
		required: [...REQUIRED_COLUMNS],
		recent: await listRecentFiles(25),
		selected,
		pendingFeatureSets: (await listFeatureSetProposals({ status: 'pending' })).length,
		// proposals this file made or was counted on (its rows refused for their columns)
		fileProposals: selected ? await listFeatureSetProposals({ fileId: Number(raw) }) : []
	};
};
