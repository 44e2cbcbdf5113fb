/**
 * `POST /api/chambers`: register chambers where they belong, one or many in a request (a fab's
 * automation onboards hundreds at once). Decided behaviour: a missing area or tool is created on the
 * way (named by its code; rename it on /admin/structure), so one request can lay out a whole fab; a tool
 * that exists in another area, a retired area or tool, or a chamber that exists already is a 409 naming
 * the entry. Everything in the request is stored, or nothing is.
 */
import type { Knex } from 'knex';
import { db } from './db.ts';
import { now } from './time.ts';
import { chamberExists, checkCode, checkName, find, type FieldErrors } from './structure-edits.ts';

export const MAX_CHAMBERS_PER_REQUEST = 2000;

export interface ChamberPlacement {
	code: string;
	name: string;
	tool: string;
	area: string;
}

export type Registration =
	| { ok: true; chambers: ChamberPlacement[]; areasCreated: string[]; toolsCreated: string[] }
	| { ok: false; status: 400 | 409; errors: FieldErrors };

/**
 * Check a request body: `{code, tool, area, name?}` or `{chambers: [ … ]}`. Field errors are keyed by
 * their JSON path (`tool`, `chambers[3].code`).
 */
export function parseRegistration(body: unknown): { ok: true; items: ChamberPlacement[] } | { ok: false; errors: FieldErrors } {
	if (typeof body !== 'object' || body === null || Array.isArray(body))
		return { ok: false, errors: { body: 'Send a JSON object: {"code", "tool", "area"} or {"chambers": [{"code", "tool", "area"}, …]}.' } };
	const many = 'chambers' in body;
	const raw = many ? (body as { chambers: unknown }).chambers : [body];
	if (!Array.isArray(raw) || raw.length === 0) return { ok: false, errors: { chambers: 'Give a non-empty list of chambers.' } };
	if (raw.length > MAX_CHAMBERS_PER_REQUEST)
		return { ok: false, errors: { chambers: `${raw.length} chambers in one request; send at most ${MAX_CHAMBERS_PER_REQUEST}.` } };
	const errors: FieldErrors = {};
	const items: ChamberPlacement[] = [];
	const seen = new Map<string, number>();
	raw.forEach((item, i) => {
		const at = (field: string) => (many ? `chambers[${i}].${field}` : field);
		if (typeof item !== 'object' || item === null) {
			errors[many ? `chambers[${i}]` : 'body'] = 'Give an object with code, tool and area.';
			return;
		}
		const o = item as Record<string, unknown>;
		const code = checkCode('chamber', o.code);
		const tool = checkCode('tool', o.tool);
		const area = checkCode('area', o.area);
		const name = checkName(o.name, code.ok ? code.code : undefined);
		if (!code.ok) errors[at('code')] = o.code === undefined ? 'Give the chamber code.' : code.message;
		if (!tool.ok) errors[at('tool')] = o.tool === undefined ? 'Give the code of the tool the chamber belongs to.' : tool.message;
		if (!area.ok) errors[at('area')] = o.area === undefined ? 'Give the code of the area the tool belongs to.' : area.message;
		if (!name.ok) errors[at('name')] = name.message;
		if (code.ok && seen.has(code.code)) errors[at('code')] = `Chamber ${code.code} is listed twice (also at chambers[${seen.get(code.code)}]).`;
		if (code.ok) seen.set(code.code, i);
		if (code.ok && tool.ok && area.ok && name.ok) items.push({ code: code.code, name: name.name, tool: tool.code, area: area.code });
	});
	const toolArea = new Map<string, string>();
	items.forEach((it) => {
		const other = toolArea.get(it.tool);
		if (other !== undefined && other !== it.area) errors.chambers = `Tool ${it.tool} is given in two areas (${other} and ${it.area}).`;
		toolArea.set(it.tool, it.area);
	});
	return Object.keys(errors).length ? { ok: false, errors } : { ok: true, items };
}

/** Store a parsed registration in one transaction (see the module comment for what is created). */
export async function registerChambers(items: ChamberPlacement[], k: Knex = db()): Promise<Registration> {
	try {
		return await k.transaction(async (trx) => {
			const areasCreated: string[] = [];
			const toolsCreated: string[] = [];
			const areaIds = new Map<string, number>();
			const toolIds = new Map<string, number>();
			for (const [i, it] of items.entries()) {
				const at = (f: string) => (items.length === 1 ? f : `chambers[${i}].${f}`);
				if (!areaIds.has(it.area)) {
					const a = await find(trx, 'area', it.area);
					if (a?.retired_at != null) throw new Conflict({ [at('area')]: `The area ${it.area} is retired: restore it first on the fab-structure page.` });
					if (a) areaIds.set(it.area, Number(a.id));
					else {
						const [r] = await trx('areas').insert({ code: it.area, name: it.area }).returning('id');
						areaIds.set(it.area, idOf(r));
						areasCreated.push(it.area);
					}
				}
				if (!toolIds.has(it.tool)) {
					const t = await trx('tools as t').join('areas as a', 'a.id', 't.area_id').where('t.code', it.tool).first('t.id', 't.retired_at', 'a.code as area');
					if (t && t.area !== it.area) throw new Conflict({ [at('tool')]: `Tool ${it.tool} is in area ${t.area}, not ${it.area}.` });
					if (t?.retired_at != null) throw new Conflict({ [at('tool')]: `The tool ${it.tool} is retired: restore it first on the fab-structure page.` });
					if (t) toolIds.set(it.tool, Number(t.id));
					else {
						const [r] = await trx('tools').insert({ code: it.tool, name: it.tool, area_id: areaIds.get(it.area) }).returning('id');
						toolIds.set(it.tool, idOf(r));
						toolsCreated.push(it.tool);
					}
				}
				if (await find(trx, 'chamber', it.code)) throw new Conflict({ [at('code')]: await chamberExists(trx, it.code) });
				await trx('chambers').insert({ code: it.code, name: it.name, tool_id: toolIds.get(it.tool), created_at: now() });
			}
			return { ok: true as const, chambers: items, areasCreated, toolsCreated };
		});
	} catch (e) {
		if (e instanceof Conflict) return { ok: false, status: 409, errors: e.errors };
		throw e;
	}
}

/** Thrown inside the transaction so that it rolls back; turned into a 409 answer. */
class Conflict extends Error {
	constructor(readonly errors: FieldErrors) {
		super('conflict');
	}
}

const idOf = (r: unknown): number => Number(typeof r === 'object' && r !== null ? (r as { id: number }).id : r);
