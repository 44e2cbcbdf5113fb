import { fail } from '@sveltejs/kit';
import { addCauseCode, CAUSE_CATEGORIES, listCauseCodes, renameCauseCode, setCauseCodeActive } from '$lib/server/cause-codes';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async () => ({ codes: await listCauseCodes(), categories: CAUSE_CATEGORIES });

const text = (f: FormData, name: string) => String(f.get(name) ?? '');
const idOf = (f: FormData) => {
	const n = Number(text(f, 'id'));
	return Number.isInteger(n) && n > 0 ? n : null;
};

export const actions: Actions = {
	add: async ({ request }) => {
		const f = await request.formData();
		const values = { code: text(f, 'code'), title: text(f, 'title'), category: text(f, 'category') };
		const r = await addCauseCode(values);
		if (!r.ok) return fail(400, { action: 'add', errors: r.errors, values });
		return { action: 'add', message: `Added ${values.code.trim().toUpperCase()}.` };
	},
	rename: async ({ request }) => {
		const f = await request.formData();
		const id = idOf(f);
		const values = { title: text(f, 'title'), category: text(f, 'category') };
		if (id === null) return fail(400, { action: 'rename', id, errors: { id: 'No such cause code.' }, values });
		const r = await renameCauseCode(id, values);
		if (!r.ok) return fail(400, { action: 'rename', id, errors: r.errors, values });
		return { action: 'rename', id, message: 'Saved.' };
	},
	retire: async ({ request }) => {
		const f = await request.formData();
		const id = idOf(f);
		const r = id === null ? { ok: false as const, errors: { id: 'No such cause code.' } } : await setCauseCodeActive(id, false);
		if (!r.ok) return fail(400, { action: 'retire', id, errors: r.errors });
		return { action: 'retire', id, message: 'Retired: hidden from new acknowledgements, kept in the history.' };
	},
	restore: async ({ request }) => {
		const f = await request.formData();
		const id = idOf(f);
		const r = id === null ? { ok: false as const, errors: { id: 'No such cause code.' } } : await setCauseCodeActive(id, true);
		if (!r.ok) return fail(400, { action: 'restore', id, errors: r.errors });
		return { action: 'restore', id, message: 'Back in the list.' };
	}
};
