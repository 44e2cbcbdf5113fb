import { json } from '@sveltejs/kit';
import { listChambers, fabSummary } from '$lib/server/fleet-structure';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = async () => json({ summary: await fabSummary(), chambers: await listChambers() });
