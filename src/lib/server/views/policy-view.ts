/**
 * The admin policy screen's read model: each setting's value in force, whether the stored value was
 * unreadable (then the defaults are in force and the page says so), and who changed it last.
 */
import type { Knex } from 'knex';
import { db } from '../db.ts';
import { AlarmPolicy, BaselinePolicy, IngestPolicy, getSetting, type SettingKey } from '../settings.ts';

const SCHEMAS = { alarm_policy: AlarmPolicy, baseline_policy: BaselinePolicy, ingest_policy: IngestPolicy } as const;

export interface PolicyState<K extends SettingKey> {
	value: Record<string, unknown>;
	stored: boolean;
	/** the stored JSON did not validate: defaults are in force */
	fellBack: boolean;
	updatedBy: string | null;
	updatedAt: number | null;
}

export async function policyState<K extends SettingKey>(key: K, k: Knex = db()): Promise<PolicyState<K>> {
	const row = await k('settings as s').leftJoin('users as u', 'u.id', 's.updated_by').where('s.key', key).first('s.value_json', 's.updated_at', 'u.display_name');
	let fellBack = false;
	if (row) {
		try {
			fellBack = !SCHEMAS[key].safeParse(JSON.parse(row.value_json)).success;
		} catch {
			fellBack = true;
		}
	}
	return {
		value: (await getSetting(key, k)) as Record<string, unknown>,
		stored: Boolean(row),
		fellBack,
		updatedBy: row?.display_name ?? null,
		updatedAt: row ? Number(row.updated_at) : null
	};
}

/**
 * A policy form's fields as the JSON value to validate: checkboxes become booleans (absent = false),
 * numeric text becomes a number, anything else is passed on as text so that validation names the
 * field ("expected number") instead of a silent default.
 */
export function policyFromForm(form: FormData, fields: { booleans: string[]; numbers: string[]; strings?: string[]; lists?: string[] }): Record<string, unknown> {
	const out: Record<string, unknown> = {};
	for (const b of fields.booleans) out[b] = form.get(b) === 'on' || form.get(b) === 'true';
	for (const n of fields.numbers) {
		const raw = String(form.get(n) ?? '').trim();
		out[n] = raw !== '' && Number.isFinite(Number(raw)) ? Number(raw) : raw;
	}
	for (const s of fields.strings ?? []) out[s] = String(form.get(s) ?? '');
	for (const l of fields.lists ?? []) out[l] = form.getAll(l).map(String);
	return out;
}
