/**
 * Alarms are episodes: an alarm ends by itself (state `cleared`, action `cleared`) after a run of
 * in-control wafers, and an acknowledged alarm that gets materially worse (or was acknowledged as a
 * false alarm) hands over to a new alarm that says why. New columns: when it cleared, the current run
 * of quiet wafers, the worst ratio and leading contributors at acknowledgement, the leading
 * contributors of the worst wafer, and which alarm a new one supersedes.
 *
 * The foundation migration put CHECK constraints on alarms.state and alarm_actions.action and a
 * partial unique index "one live alarm" over state <> 'closed'. PostgreSQL changes them in place.
 * SQLite cannot alter a CHECK constraint, so the two tables are rebuilt as SQLite's documentation
 * prescribes ("Making other kinds of table schema changes", sqlite.org/lang_altertable.html):
 * foreign keys off, create the new table, copy, drop, rename, recreate indexes and triggers,
 * foreign_key_check, foreign keys on. PRAGMA foreign_keys is a no-op inside a transaction, hence
 * `config.transaction = false`; the rebuild itself runs in one transaction of its own.
 */
import type { Knex } from 'knex';

export const config = { transaction: false };

const STATES_OLD = `'open', 'acknowledged', 'closed'`;
const STATES_NEW = `'open', 'acknowledged', 'cleared', 'closed'`;
const ACTIONS_OLD = `'opened', 'acknowledged', 'closed', 'reopened', 'commented'`;
const ACTIONS_NEW = `'opened', 'acknowledged', 'cleared', 'closed', 'reopened', 'commented'`;
const LIVE_INDEX = `CREATE UNIQUE INDEX alarms_one_live ON alarms (chamber_id, recipe_step_id, rule) WHERE state IN ('open', 'acknowledged')`;
const OLD_LIVE_INDEX = `CREATE UNIQUE INDEX alarms_one_live ON alarms (chamber_id, recipe_step_id, rule) WHERE state <> 'closed'`;

const isPg = (knex: Knex) => knex.client.config.client === 'pg';

/** Swap the IN (…) list of a column's CHECK in a SQLite CREATE TABLE statement (as Knex wrote it: check (`col` in ('a','b'))). */
const withList = (column: string, values: string) => (sql: string) => sql.replace(new RegExp('(check \\(`' + column + '` in \\()[^)]*(\\))', 'i'), `$1${values}$2`);

/** Replace the CHECK (col IN (…)) list of one column on PostgreSQL, whatever the constraint is called. */
async function pgReplaceCheck(knex: Knex, table: string, column: string, values: string) {
	const rows = (
		await knex.raw(
			`SELECT conname FROM pg_constraint WHERE conrelid = ?::regclass AND contype = 'c' AND pg_get_constraintdef(oid) ~ ?`,
			[table, `\\m${column}\\M`]
		)
	).rows as { conname: string }[];
	for (const r of rows) await knex.raw(`ALTER TABLE ?? DROP CONSTRAINT ??`, [table, r.conname]);
	await knex.raw(`ALTER TABLE ?? ADD CONSTRAINT ?? CHECK (?? IN (${values}))`, [table, `${table}_${column}_check`, column]);
}

/**
 * Rebuild one SQLite table with its CREATE statement edited by `edit`, keeping rows, indexes and
 * triggers (those whose SQL `skip` does not refuse). Runs inside the caller's transaction.
 */
async function sqliteRebuild(
	trx: Knex.Transaction,
	table: string,
	edit: (sql: string) => string,
	skip: (sql: string) => boolean = () => false,
	column: (name: string) => string = (name) => `\`${name}\``
) {
	const rows = (await trx.raw(`SELECT type, name, sql FROM sqlite_master WHERE tbl_name = ? AND sql IS NOT NULL`, [table])) as { type: string; name: string; sql: string }[];
	const create = rows.find((r) => r.type === 'table');
	if (!create) throw new Error(`no table ${table}`);
	const edited = edit(create.sql);
	if (edited === create.sql) throw new Error(`the ${table} schema did not contain the expected CHECK list; nothing changed`);
	const tmp = `${table}__rebuild`;
	const newSql = edited.replace(/^CREATE TABLE\s+[`"]?\w+[`"]?/i, `CREATE TABLE \`${tmp}\``);
	await trx.raw(newSql);
	const columns = ((await trx.raw(`PRAGMA table_info(\`${table}\`)`)) as { name: string }[]).map((c) => c.name);
	await trx.raw(`INSERT INTO \`${tmp}\` SELECT ${columns.map(column).join(', ')} FROM \`${table}\``);
	await trx.raw(`DROP TABLE \`${table}\``);
	await trx.raw(`ALTER TABLE \`${tmp}\` RENAME TO \`${table}\``);
	for (const r of rows) if (r.type !== 'table' && !skip(r.sql)) await trx.raw(r.sql);
}

async function sqliteChange(knex: Knex, states: string, actions: string, liveIndex: string) {
	await knex.raw('PRAGMA foreign_keys = OFF');
	try {
		await knex.transaction(async (trx) => {
			await sqliteRebuild(trx, 'alarms', withList('state', states), (sql) => /alarms_one_live/.test(sql));
			await trx.raw(liveIndex);
			await sqliteRebuild(trx, 'alarm_actions', withList('action', actions));
			const broken = (await trx.raw('PRAGMA foreign_key_check')) as unknown[];
			if (broken.length) throw new Error(`foreign key check failed after the rebuild: ${JSON.stringify(broken.slice(0, 3))}`);
		});
	} finally {
		await knex.raw('PRAGMA foreign_keys = ON');
	}
}

export async function up(knex: Knex): Promise<void> {
	if (isPg(knex)) {
		await knex.transaction(async (trx) => {
			await pgReplaceCheck(trx, 'alarms', 'state', STATES_NEW);
			await pgReplaceCheck(trx, 'alarm_actions', 'action', ACTIONS_NEW);
			await trx.raw('DROP INDEX alarms_one_live');
			await trx.raw(LIVE_INDEX);
		});
	} else {
		await sqliteChange(knex, STATES_NEW, ACTIONS_NEW, LIVE_INDEX);
	}
	await knex.schema.alterTable('alarms', (t) => {
		t.bigInteger('cleared_at');
		t.integer('quiet_count').notNullable().defaultTo(0);
		t.double('ack_ratio');
		t.text('ack_leading_json');
		t.text('leading_json');
		t.integer('supersedes_id');
	});
}

export async function down(knex: Knex): Promise<void> {
	await knex.schema.alterTable('alarms', (t) => {
		t.dropColumn('cleared_at');
		t.dropColumn('quiet_count');
		t.dropColumn('ack_ratio');
		t.dropColumn('ack_leading_json');
		t.dropColumn('leading_json');
		t.dropColumn('supersedes_id');
	});
	// Cleared alarms become closed (the old schema's end state); their actions stay as 'closed'.
	await knex('alarms').where('state', 'cleared').update({ state: 'closed' });
	if (isPg(knex)) {
		await knex.transaction(async (trx) => {
			await trx.raw(`ALTER TABLE alarm_actions DISABLE TRIGGER alarm_actions_no_update`);
			await trx('alarm_actions').where('action', 'cleared').update({ action: 'closed', to_state: 'closed' });
			await trx.raw(`ALTER TABLE alarm_actions ENABLE TRIGGER alarm_actions_no_update`);
			await pgReplaceCheck(trx, 'alarms', 'state', STATES_OLD);
			await pgReplaceCheck(trx, 'alarm_actions', 'action', ACTIONS_OLD);
			await trx.raw('DROP INDEX alarms_one_live');
			await trx.raw(OLD_LIVE_INDEX);
		});
	} else {
		await knex.raw('PRAGMA foreign_keys = OFF');
		try {
			await knex.transaction(async (trx) => {
				await sqliteRebuild(trx, 'alarms', withList('state', STATES_OLD), (sql) => /alarms_one_live/.test(sql));
				await trx.raw(OLD_LIVE_INDEX);
				// The append-only triggers come back with the rebuilt table; the copy turns 'cleared' into 'closed'.
				await sqliteRebuild(
					trx,
					'alarm_actions',
					withList('action', ACTIONS_OLD),
					() => false,
					(name) => (name === 'action' || name === 'to_state' || name === 'from_state' ? `CASE \`${name}\` WHEN 'cleared' THEN 'closed' ELSE \`${name}\` END` : `\`${name}\``)
				);
			});
		} finally {
			await knex.raw('PRAGMA foreign_keys = ON');
		}
	}
}
