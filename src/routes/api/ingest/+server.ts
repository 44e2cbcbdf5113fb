import { json } from '@sveltejs/kit';
import { ingestRequest } from '$lib/server/ingest/http';
import { tokenRegistersChambers } from '$lib/server/api-tokens';
import type { RequestHandler } from './$types';

/**
 * Wafer summaries from a tool host (`Authorization: Bearer <ingest token>`) or the upload page (an
 * engineer's session). A streamed body, so it is an endpoint rather than a form action, whose
 * `formData()` would hold the whole file in memory.
 */
export const POST: RequestHandler = async ({ request, url, locals }) => {
	// SvelteKit's origin check covers form encodings only; a session caller must also be same-origin.
	if (!locals.apiToken) {
		const origin = request.headers.get('origin');
		if (origin && origin !== url.origin)
			return json({ error: 'Cross-origin uploads are refused.', location: { file: null, line: null, column: null } }, { status: 403 });
	}
	const user = locals.user ? { id: locals.user.id, role: locals.user.role } : null;
	const token = locals.apiToken ? { id: locals.apiToken.id, registers: tokenRegistersChambers(locals.apiToken) } : null;
	const answer = await ingestRequest(request, url, { user, token });
	return json(answer.body, { status: answer.status });
};
