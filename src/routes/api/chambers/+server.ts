import { json } from '@sveltejs/kit';
import { readJsonBody } from '$lib/server/api-body';
import { parseRegistration, registerChambers } from '$lib/server/chamber-registration';
import { listChambers } from '$lib/server/fleet-structure';
import type { RequestHandler } from './$types';

/** The fleet's chambers with their tool and area; `?retired=include` adds the retired ones. */
export const GET: RequestHandler = async ({ url }) => {
	const retired = url.searchParams.get('retired');
	if (retired !== null && retired !== 'include' && retired !== 'exclude')
		return json({ error: 'retired must be include or exclude.', errors: { retired: `got “${retired.slice(0, 40)}”` } }, { status: 400 });
	const chambers = await listChambers(undefined, { includeRetired: retired === 'include' });
	return json({
		chambers: chambers.map((c) => ({
			code: c.code,
			name: c.name,
			tool: c.toolCode,
			area: c.areaCode,
			retiredAt: c.retiredAt === null ? null : new Date(c.retiredAt).toISOString(),
			requalifySince: c.requalifySince === null ? null : new Date(c.requalifySince).toISOString(),
			requalifyReason: c.requalifyReason
		}))
	});
};

/** Register one chamber `{code, tool, area, name?}` or many `{chambers: […]}` (chamber-registration.ts). */
export const POST: RequestHandler = async ({ request }) => {
	const body = await readJsonBody(request);
	if (!body.ok) return body.response;
	const parsed = parseRegistration(body.value);
	if (!parsed.ok) return json({ error: summary(parsed.errors), errors: parsed.errors }, { status: 400 });
	const r = await registerChambers(parsed.items);
	if (!r.ok) return json({ error: summary(r.errors), errors: r.errors }, { status: r.status });
	return json({ chambers: r.chambers, areasCreated: r.areasCreated, toolsCreated: r.toolsCreated }, { status: 201 });
};

const summary = (errors: Record<string, string>) => {
	const entries = Object.entries(errors);
	const [field, message] = entries[0];
	return `${field}: ${message}${entries.length > 1 ? ` (and ${entries.length - 1} more)` : ''}`;
};
