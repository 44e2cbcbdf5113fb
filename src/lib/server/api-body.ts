/**
 * Reading a JSON request body for the API: the content type, the size, and where the JSON is broken,
 * answered as `{ error, location }` like the ingest route's refusals.
 */
import { json } from '@sveltejs/kit';
import { jsonErrorOffset } from './json-error-offset.ts';

/** JSON bodies of the API besides ingest are small: a list of 2,000 chambers is ≈ 150 kB. */
export const API_JSON_LIMIT_BYTES = 1024 * 1024;

/** Line and column (1-based) of a character offset in `text`. */
export function lineColumn(text: string, offset: number): { line: number; column: number } {
	const before = text.slice(0, offset);
	const line = before.split('\n').length;
	return { line, column: offset - before.lastIndexOf('\n') };
}

export async function readJsonBody(request: Request): Promise<{ ok: true; value: unknown } | { ok: false; response: Response }> {
	const type = (request.headers.get('content-type') ?? '').split(';')[0].trim().toLowerCase();
	if (type !== 'application/json')
		return { ok: false, response: json({ error: `Send the body as application/json (got ${type || 'no content type'}).` }, { status: 415 }) };
	const text = await request.text();
	if (text.length > API_JSON_LIMIT_BYTES)
		return { ok: false, response: json({ error: `The body is ${text.length} bytes; the limit is ${API_JSON_LIMIT_BYTES}.` }, { status: 413 }) };
	try {
		return { ok: true, value: JSON.parse(text) };
	} catch (e) {
		const message = e instanceof Error ? e.message : String(e);
		const offset = jsonErrorOffset(text);
		const location = offset === null ? null : lineColumn(text, offset);
		return {
			ok: false,
			response: json({ error: `The body is not valid JSON: ${message}`, location: location && { file: null, ...location } }, { status: 400 })
		};
	}
}
