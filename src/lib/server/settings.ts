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
	/**
	 * The budget every wafer rule is designed around: false alarms per chamber × recipe step per
	 * 10,000 in-control wafer-steps, all rules together (monitoring/alarm-rules.ts designRules).
	 * 2 ≈ one a week for a chamber running 3 steps at 20 wafers an hour (common practice: about one a week).
	 */
	falseAlarmsPer10k: z.number().min(0.1).max(100).default(2),
	/** A wafer far beyond its limit (in-control probability within the budget). */
	singleEnabled: z.boolean().default(true),
	/** k of the last m wafer-steps beyond the warning score (derived from the budget). */
	runEnabled: z.boolean().default(true),
	runK: z.number().int().min(2).max(20).default(3),
	runM: z.number().int().min(2).max(50).default(5),
	/** Drift: EWMA of the normal scores of the T² and Q ratios; its L follows from the budget. */
	ewmaEnabled: z.boolean().default(true),
	ewmaLambda: z.number().min(0.05).max(1).default(0.2),
	/** Consecutive in-control wafers after which a live alarm ends by itself (state cleared). */
	clearAfter: z.number().int().min(3).max(500).default(25),
	/** An acknowledged alarm whose worst ratio reaches this multiple of the ratio at acknowledgement hands over to a new alarm. */
	reopenFactor: z.number().min(1.2).max(100).default(3),
	/** Chamber flagged by fleet matching. */
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
