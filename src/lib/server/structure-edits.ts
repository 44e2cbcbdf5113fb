/**
 * Changes to the fab structure (areas, tools, chambers), made by admins on /admin/structure or through
 * `POST /api/chambers`. Nothing here deletes: wafer-steps, baselines and alarms point at chambers, so a
 * chamber leaves service by being retired (new rows for it are refused; its history stays readable)
 * and can be restored. Codes never change once created — they are what tool hosts send — names do.
 *
 * Every function answers `{ ok: false, status, errors }` with the field at fault instead of throwing:
 * 400 for a malformed value, 404 for a code that names nothing, 409 for a conflict with what exists.
 */
import type { Knex } from 'knex';
import { db } from './db.ts';
import { now } from './time.ts';
import { UNASSIGNED } from './ingest/catalog.ts';
import { ID_MAX } from './ingest/limits.ts';
import { parseId } from './ingest/values.ts';

export type Kind = 'area' | 'tool' | 'chamber';
export const KINDS: readonly Kind[] = ['area', 'tool', 'chamber'];
const TABLE: Record<Kind, string> = { area: 'areas', tool: 'tools', chamber: 'chambers' };

export type FieldErrors = Record<string, string>;
export type EditResult<T = object> = ({ ok: true } & T) | { ok: false; status: 400 | 404 | 409; errors: FieldErrors };

const fail = (status: 400 | 404 | 409, errors: FieldErrors) => ({ ok: false as const, status, errors });

export function isKind(x: unknown): x is Kind {
	return typeof x === 'string' && (KINDS as readonly string[]).includes(x);
}

/**
 * A code as ingest accepts it for `chamber_id` (letters, digits and . _ : # / + -, at most 32
 * characters), so that every chamber created here can receive files and every chamber a file names
 * could have been created here. The same rule serves areas and tools.
 */
export function checkCode(kind: Kind, raw: unknown): { ok: true; code: string } | { ok: false; message: string } {
	if (typeof raw !== 'string') return { ok: false, message: `Give the ${kind} code as text.` };
	const p = parseId(raw, ID_MAX.chamber_id);
	if (!p.ok) return { ok: false, message: `The ${kind} code ${p.reason} (e.g. ${kind === 'chamber' ? 'DE04-A' : kind === 'tool' ? 'DE04' : 'DIEL'}).` };
	return { ok: true, code: p.value };
}

/** A display name: 1–120 characters after trimming; empty falls back to `fallback` when given. */
export function checkName(raw: unknown, fallback?: string): { ok: true; name: string } | { ok: false; message: string } {
	const name = typeof raw === 'string' ? raw.trim() : '';
	if (!name && fallback !== undefined) return { ok: true, name: fallback };
	if (!name) return { ok: false, message: 'Give a name.' };
	if (name.length > 120) return { ok: false, message: `The name has ${name.length} characters; keep it to 120.` };
	return { ok: true, name };
}

export async function find(trx: Knex, kind: Kind, code: string) {
	return trx(TABLE[kind]).where({ code }).first();
}

async function liveParent(trx: Knex, kind: 'area' | 'tool', code: string, field: string): Promise<{ id: number } | FieldErrors> {
	const row = await find(trx, kind, code);
	if (!row) return { [field]: `There is no ${kind} ${code}.` };
	if (row.retired_at !== null) return { [field]: `The ${kind} ${code} is retired: restore it first, or choose another.` };
	return { id: Number(row.id) };
}

/** The parent of each kind, and the column that points at it. */
const PARENT = { tool: { kind: 'area', column: 'area_id' }, chamber: { kind: 'tool', column: 'tool_id' } } as const;

/**
 * Create an area, a tool in a live area (`parent` is the area's code) or a chamber in a live tool
 * (`parent` is the tool's code). The name defaults to the code.
 */
export async function addEntry(kind: Kind, input: { code: unknown; name?: unknown; parent?: unknown }, k: Knex = db()): Promise<EditResult<{ code: string }>> {
	const code = checkCode(kind, input.code);
	const name = checkName(input.name, code.ok ? code.code : undefined);
	const up = kind === 'area' ? null : PARENT[kind];
	const parent = up ? checkCode(up.kind, input.parent) : null;
	const errors: FieldErrors = {};
	if (!code.ok) errors.code = code.message;
	if (!name.ok) errors.name = name.message;
	if (up && parent && !parent.ok) errors[up.kind] = input.parent ? parent.message : `Choose the ${up.kind} it belongs to.`;
	if (!code.ok || !name.ok || (parent && !parent.ok)) return fail(400, errors);
	return k.transaction(async (trx) => {
		if (await find(trx, kind, code.code))
			return fail(409, { code: kind === 'chamber' ? await chamberExists(trx, code.code) : `${kind === 'area' ? 'An area' : 'A tool'} ${code.code} exists already.` });
		const row: Record<string, unknown> = { code: code.code, name: name.name };
		if (up && parent?.ok) {
			const p = await liveParent(trx, up.kind, parent.code, up.kind);
			if (!('id' in p)) return fail(404, p);
			row[up.column] = p.id;
		}
		if (kind === 'chamber') row.created_at = now();
		await trx(TABLE[kind]).insert(row);
		return { ok: true as const, code: code.code };
	});
}

/** "Chamber X exists already, in tool T (area A)" — where it is, so the caller can tell a repeat from a clash. */
export async function chamberExists(trx: Knex, code: string): Promise<string> {
	const at = await trx('chambers as c').join('tools as t', 't.id', 'c.tool_id').join('areas as a', 'a.id', 't.area_id').where('c.code', code).first('t.code as tool', 'a.code as area', 'c.retired_at');
	return `Chamber ${code} exists already, in tool ${at?.tool} (area ${at?.area})${at?.retired_at !== null ? ', retired' : ''}.`;
}

/** Give an area, tool or chamber a new display name (its code stays). */
export async function renameEntry(kind: Kind, code: string, rawName: unknown, k: Knex = db()): Promise<EditResult> {
	const name = checkName(rawName);
	if (!name.ok) return fail(400, { name: name.message });
	const n = await k(TABLE[kind]).where({ code }).update({ name: name.name });
	return n ? { ok: true } : fail(404, { code: `There is no ${kind} ${code}.` });
}

/** Move a tool to another area, or a chamber to another tool (assigning a registered chamber is such a move). */
export async function moveEntry(kind: 'tool' | 'chamber', code: string, rawTarget: unknown, k: Knex = db()): Promise<EditResult<{ from: string; to: string }>> {
	const parentKind = kind === 'tool' ? 'area' : 'tool';
	if (rawTarget === '' || rawTarget === undefined || rawTarget === null) return fail(400, { to: `Choose the ${parentKind} to move it to.` });
	const target = checkCode(parentKind, rawTarget);
	if (!target.ok) return fail(400, { to: target.message });
	return k.transaction(async (trx) => {
		const row = await find(trx, kind, code);
		if (!row) return fail(404, { code: `There is no ${kind} ${code}.` });
		if (row.retired_at !== null) return fail(409, { code: `The ${kind} ${code} is retired: restore it before moving it.` });
		const parent = await liveParent(trx, parentKind, target.code, 'to');
		if (!('id' in parent)) return fail(404, parent);
		const column = kind === 'tool' ? 'area_id' : 'tool_id';
		const from = await trx(TABLE[parentKind]).where({ id: row[column] }).first('code');
		if (Number(row[column]) === parent.id) return fail(409, { to: `The ${kind} ${code} is in ${parentKind} ${target.code} already.` });
		await trx(TABLE[kind]).where({ id: row.id }).update({ [column]: parent.id });
		return { ok: true as const, from: String(from?.code ?? ''), to: target.code };
	});
}

/**
 * Retire an entry: a chamber refuses new wafers and leaves the fleet's screens, its history stays; a
 * tool only once its chambers are all retired or moved; an area only once its tools are. The holding
 * area and tool for registered chambers cannot be retired (ingest puts new chambers there).
 */
export async function retireEntry(kind: Kind, code: string, k: Knex = db()): Promise<EditResult> {
	return k.transaction(async (trx) => {
		const row = await find(trx, kind, code);
		if (!row) return fail(404, { code: `There is no ${kind} ${code}.` });
		if (row.retired_at !== null) return fail(409, { code: `The ${kind} ${code} is retired already.` });
		if (kind !== 'chamber' && code === UNASSIGNED.code)
			return fail(409, { code: `${UNASSIGNED.code} holds the chambers ingest registers until they are assigned; it cannot be retired.` });
		if (kind !== 'chamber') {
			const child = kind === 'area' ? 'tools' : 'chambers';
			const live = await trx(child)
				.where({ [kind === 'area' ? 'area_id' : 'tool_id']: row.id })
				.whereNull('retired_at')
				.orderBy('code')
				.pluck('code');
			if (live.length)
				return fail(409, {
					code: `The ${kind} ${code} still has ${live.length} live ${kind === 'area' ? 'tool' : 'chamber'}${live.length === 1 ? '' : 's'} (${live.slice(0, 6).join(', ')}${live.length > 6 ? ', …' : ''}): move or retire ${live.length === 1 ? 'it' : 'them'} first.`
				});
		}
		await trx(TABLE[kind]).where({ id: row.id }).update({ retired_at: now() });
		return { ok: true as const };
	});
}

/** Bring a retired entry back into service; its parent must be live. */
export async function restoreEntry(kind: Kind, code: string, k: Knex = db()): Promise<EditResult> {
	return k.transaction(async (trx) => {
		const row = await find(trx, kind, code);
		if (!row) return fail(404, { code: `There is no ${kind} ${code}.` });
		if (row.retired_at === null) return fail(409, { code: `The ${kind} ${code} is in service already.` });
		if (kind !== 'area') {
			const parentKind = kind === 'tool' ? 'area' : 'tool';
			const parent = await trx(TABLE[parentKind]).where({ id: row[kind === 'tool' ? 'area_id' : 'tool_id'] }).first('code', 'retired_at');
			if (parent?.retired_at !== null)
				return fail(409, { code: `Its ${parentKind} ${parent?.code} is retired: restore that first, or move the ${kind} once restored.` });
		}
		await trx(TABLE[kind]).where({ id: row.id }).update({ retired_at: null });
		return { ok: true as const };
	});
}
