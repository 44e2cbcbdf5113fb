import { json } from '@sveltejs/kit';
import { getTask } from '$lib/server/tasks';
import type { RequestHandler } from './$types';

// Progress of an in-process background task (see src/lib/server/tasks.ts for what a restart means).
export const GET: RequestHandler = async ({ params }) => {
	const t = getTask(params.id);
	if (!t) return json({ error: `No task ${params.id} in this server process (finished long ago, or the server restarted).` }, { status: 404 });
	return json(t, { headers: { 'cache-control': 'no-store' } });
};
