/**
 * The admin-managed list of cause codes. A code is never deleted once used (the audit trail points at
 * it): "retire" hides it from the acknowledge form and keeps the history readable.
 */
import type { Knex } from 'knex';
import { db } from './db.ts';
import { now } from './time.ts';
import { CAUSE_CATEGORIES, type CauseCategory } from '../cause-categories.ts';

export { CAUSE_CATEGORIES, type CauseCategory };

export interface CauseCode {
	id: number;
	code: string;
	title: string;
	category: CauseCategory;
	active: boolean;
	/** acknowledgements that cite the code */
	uses: number;
}

export async function listCauseCodes(q: { activeOnly?: boolean } = {}, k: Knex = db()): Promise<CauseCode[]> {
	const rows = await k('cause_codes as c')
		.leftJoin('alarm_actions as a', 'a.cause_code_id', 'c.id')
		.modify((qb) => (q.activeOnly ? qb.where('c.active', true) : qb))
		.groupBy('c.id', 'c.code', 'c.title', 'c.category', 'c.active')
		.orderBy([{ column: 'c.category' }, { column: 'c.code' }])
		.select('c.id', 'c.code', 'c.title', 'c.category', 'c.active', k.raw('count(a.id) as uses'));
	return rows.map((r) => ({ id: r.id, code: r.code, title: r.title, category: r.category, active: Boolean(r.active), uses: Number(r.uses) }));
}

export type FieldErrors = Record<string, string>;

const CODE = /^[A-Z0-9][A-Z0-9-]{0,31}$/;

function validate(input: { code?: string; title: string; category: string }): FieldErrors {
	const e: FieldErrors = {};
	if (input.code !== undefined && !CODE.test(input.code))
		e.code = 'Use 1–32 capital letters, digits and hyphens, starting with a letter or digit (e.g. HW-RFM).';
	const title = input.title.trim();
	if (!title) e.title = 'Give the cause a title.';
	else if (title.length > 200) e.title = 'Keep the title under 200 characters.';
	if (!Object.hasOwn(CAUSE_CATEGORIES, input.category)) e.category = 'Choose a category.';
	return e;
}

export async function addCauseCode(
	input: { code: string; title: string; category: string },
	k: Knex = db()
): Promise<{ ok: true; id: number } | { ok: false; errors: FieldErrors }> {
	const code = input.code.trim().toUpperCase();
	const errors = validate({ ...input, code });
	if (Object.keys(errors).length) return { ok: false, errors };
	return k.transaction(async (trx) => {
		if (await trx('cause_codes').where({ code }).first('id')) return { ok: false as const, errors: { code: `${code} exists already.` } };
		const [row] = await trx('cause_codes')
			.insert({ code, title: input.title.trim(), category: input.category, active: true, created_at: now() })
			.returning('id');
		return { ok: true as const, id: typeof row === 'object' ? row.id : row };
	});
}

/** Change a code's title and category (the code itself stays: the history cites it). */
export async function renameCauseCode(
	id: number,
	input: { title: string; category: string },
	k: Knex = db()
): Promise<{ ok: true } | { ok: false; errors: FieldErrors }> {
	const errors = validate(input);
	if (Object.keys(errors).length) return { ok: false, errors };
	const n = await k('cause_codes').where({ id }).update({ title: input.title.trim(), category: input.category });
	return n ? { ok: true } : { ok: false, errors: { id: 'No such cause code.' } };
}

/** Retire (hide from new acknowledgements) or bring back a code. */
export async function setCauseCodeActive(id: number, active: boolean, k: Knex = db()): Promise<{ ok: true } | { ok: false; errors: FieldErrors }> {
	return k.transaction(async (trx) => {
		const row = await trx('cause_codes').where({ id }).first('id', 'active');
		if (!row) return { ok: false as const, errors: { id: 'No such cause code.' } };
		if (!active) {
			const left = await trx('cause_codes').where({ active: true }).whereNot({ id }).count({ n: '*' }).first();
			if (Number(left?.n ?? 0) === 0) return { ok: false as const, errors: { id: 'Keep at least one active cause code, or nobody can acknowledge.' } };
		}
		await trx('cause_codes').where({ id }).update({ active });
		return { ok: true as const };
	});
}
