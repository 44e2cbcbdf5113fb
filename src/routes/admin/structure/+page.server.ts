import { fail } from '@sveltejs/kit';
import { listStructure } from '$lib/server/fleet-structure';
import { UNASSIGNED } from '$lib/server/ingest/catalog';
import { addEntry, isKind, moveEntry, renameEntry, restoreEntry, retireEntry, type EditResult } from '$lib/server/structure-edits';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async () => ({ structure: await listStructure(), unassigned: UNASSIGNED.code });

const text = (f: FormData, name: string) => String(f.get(name) ?? '');

/** A create action's answer: the new code, or the field errors with what was typed. */
function created(action: string, r: EditResult<{ code: string }>, values: Record<string, string>, what: string) {
	if (!r.ok) return fail(r.status, { action, errors: r.errors, values });
	return { action, message: `${what} ${r.code} created.` };
}

/** A row action's answer, tied to the row (`kind:code`) so the page shows it there. */
function onRow(action: string, kind: string, code: string, r: EditResult<object>, message: string) {
	const row = `${kind}:${code}`;
	if (!r.ok) return fail(r.status, { action, row, errors: r.errors });
	return { action, row, message };
}

/** kind and code of the row a form names; a forged kind is answered, not thrown. */
function target(f: FormData) {
	const kind = text(f, 'kind');
	return { kind: isKind(kind) ? kind : null, rawKind: kind, code: text(f, 'code') };
}
const badKind = (action: string, rawKind: string, code: string) =>
	fail(400, { action, row: `${rawKind}:${code}`, errors: { kind: 'Say whether this is an area, a tool or a chamber.' } });

export const actions: Actions = {
	area: async ({ request }) => {
		const f = await request.formData();
		const values = { code: text(f, 'code'), name: text(f, 'name') };
		return created('area', await addEntry('area', values), values, 'Area');
	},
	tool: async ({ request }) => {
		const f = await request.formData();
		const values = { code: text(f, 'code'), name: text(f, 'name'), area: text(f, 'area') };
		return created('tool', await addEntry('tool', { ...values, parent: values.area }), values, 'Tool');
	},
	chamber: async ({ request }) => {
		const f = await request.formData();
		const values = { code: text(f, 'code'), name: text(f, 'name'), tool: text(f, 'tool') };
		return created('chamber', await addEntry('chamber', { ...values, parent: values.tool }), values, 'Chamber');
	},
	rename: async ({ request }) => {
		const f = await request.formData();
		const { kind, rawKind, code } = target(f);
		if (!kind) return badKind('rename', rawKind, code);
		return onRow('rename', kind, code, await renameEntry(kind, code, text(f, 'name')), 'Name saved.');
	},
	move: async ({ request }) => {
		const f = await request.formData();
		const { kind, rawKind, code } = target(f);
		if (kind !== 'tool' && kind !== 'chamber') return badKind('move', rawKind, code);
		const r = await moveEntry(kind, code, text(f, 'to'));
		return onRow('move', kind, code, r, r.ok ? `Moved from ${r.from} to ${r.to}.` : '');
	},
	retire: async ({ request }) => {
		const f = await request.formData();
		const { kind, rawKind, code } = target(f);
		if (!kind) return badKind('retire', rawKind, code);
		const message = kind === 'chamber' ? 'Retired: new wafers for it are refused; its history stays.' : 'Retired.';
		return onRow('retire', kind, code, await retireEntry(kind, code), message);
	},
	restore: async ({ request }) => {
		const f = await request.formData();
		const { kind, rawKind, code } = target(f);
		if (!kind) return badKind('restore', rawKind, code);
		return onRow('restore', kind, code, await restoreEntry(kind, code), 'Back in service.');
	}
};
