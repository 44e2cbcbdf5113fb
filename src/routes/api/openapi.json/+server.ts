import { json } from '@sveltejs/kit';
import { openApiDocument } from '$lib/server/openapi/document';
import type { RequestHandler } from './$types';

/** The API's OpenAPI 3.1 document; the server URL is the origin it was asked on. */
export const GET: RequestHandler = async ({ url }) => json(openApiDocument(url.origin), { headers: { 'cache-control': 'no-cache' } });
