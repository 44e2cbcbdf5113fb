/**
 * Admin-editable policy, stored as JSON rows in `settings` with defaults here. Every reader gets a
 * complete, validated object; an unknown or malformed stored value falls back to the default for
 * that key and says so in the admin page.
 */
import type { Knex } from 'knex';
import { z } from 'zod';
import { db } from './db.ts';
import { now } from './time.ts';

export const AlarmPolicy = z.object({
	/** One wafer-step above the α limit in T² or Q. */
	singleEnabled: z.boolean().default(true),
	/** k of the last m wafer-steps above the warning limit. */
	runEnabled: z.boolean().default(true),
	runK: z.number().int().min(2).max(20).default(3),
	runM: z.number().int().min(2).max(50).default(5),
	/** EWMA of the T² ratio or of the Q ratio above its upper limit. */
	ewmaEnabled: z.boolean().default(true),
	ewmaLambda: z.number().gt(0).max(1).default(0.2),
	// 3.5 rather than the textbook 3: consecutive wafers of a lot are correlated, which the EWMA
	// variance formula (independent values) does not see; measured on the demo fab (common practice).
	ewmaL: z.number().gt(0).max(6).default(3.5),
	/** Chamber flagged by fleet matching (|modified z| > 3.5). */
	fleetEnabled: z.boolean().default(true),
	/** Wafers in the seasoning window after a wet clean (baseline policy's seasoningWafers) open no wafer alarms. */
	holdDuringSeasoning: z.boolean().default(true),
	fleetWindow: z.number().int().min(5).max(500).default(25)
});
export type AlarmPolicy = z.infer<typeof AlarmPolicy>;

export const BaselinePolicy = z.object({
	/** An approver other than the builder is required. */
	fourEyes: z.boolean().default(false),
	/** Wafers after a wet clean excluded from golden sets by default (seasoning). */
	seasoningWafers: z.number().int().min(0).max(500).default(30), // common practice: tens of wafers
	/** A wet clean or part swap puts the chamber into requalify. */
	requalifyOn: z.array(z.enum(['wet_clean', 'part_swap', 'pm'])).default(['wet_clean', 'part_swap']),
	alpha: z.number().gt(0).lt(0.5).default(0.01),
	warningAlpha: z.number().gt(0).lt(0.5).default(0.05)
});
export type BaselinePolicy = z.infer<typeof BaselinePolicy>;

export const IngestPolicy = z.object({
	/** Unknown chamber ids: refuse the rows, or register the chamber when an admin submits. */
	unknownChamber: z.enum(['refuse', 'auto_register_for_admins']).default('refuse')
});
export type IngestPolicy = z.infer<typeof IngestPolicy>;

const SCHEMAS = { alarm_policy: AlarmPolicy, baseline_policy: BaselinePolicy, ingest_policy: IngestPolicy } as const;
export type SettingKey = keyof typeof SCHEMAS;
type Value<K extends SettingKey> = z.infer<(typeof SCHEMAS)[K]>;

export async function getSetting<K extends SettingKey>(key: K, k: Knex = db()): Promise<Value<K>> {
	const row = await k('settings').where({ key }).first('value_json');
	const schema = SCHEMAS[key];
	if (!row) return schema.parse({}) as Value<K>;
	try {
		return schema.parse(JSON.parse(row.value_json)) as Value<K>;
	} catch {
		return schema.parse({}) as Value<K>;
	}
}

/** Validate and store a setting; returns field errors instead of storing when the value is bad. */
export async function putSetting<K extends SettingKey>(
	key: K,
	value: unknown,
	userId: string | null,
	k: Knex = db()
): Promise<{ ok: true; value: Value<K> } | { ok: false; errors: Record<string, string> }> {
	const parsed = SCHEMAS[key].safeParse(value);
	if (!parsed.success) {
		const errors: Record<string, string> = {};
		for (const issue of parsed.error.issues) errors[issue.path.join('.') || key] = issue.message;
		return { ok: false, errors };
	}
	const row = { key, value_json: JSON.stringify(parsed.data), updated_by: userId, updated_at: now() };
	await k('settings').insert(row).onConflict('key').merge();
	return { ok: true, value: parsed.data as Value<K> };
}
