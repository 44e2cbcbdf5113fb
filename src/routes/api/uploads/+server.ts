import { json } from '@sveltejs/kit';
import { listRecentFiles } from '$lib/server/ingest/files';
import { getProgress, UPLOAD_ID } from '$lib/server/ingest/progress';
import type { RequestHandler } from './$types';

/** `?id=<upload id>`: the caller's upload in progress; without: the recent files. */
export const GET: RequestHandler = async ({ url, locals }) => {
	const id = url.searchParams.get('id');
	if (id !== null) {
		if (!UPLOAD_ID.test(id)) return json({ error: 'id must be 8–64 letters, digits or dashes.' }, { status: 400 });
		return json({ progress: getProgress(`user:${locals.user!.id}`, id) });
	}
	return json({ files: await listRecentFiles(25) });
};
