/**
 * Fab structure that admins edit, and personal API tokens.
 *
 * - `retired_at` on areas, tools and chambers: a retired entry leaves the lists and refuses new data but
 *   keeps its history (wafer-steps, baselines and alarms still point at it), so nothing is deleted.
 * - `api_tokens.scopes` replaces the single `scope` (a comma-separated subset of read, write, ingest,
 *   register: one token may need several, e.g. ingest + register for a tool host that onboards its own
 *   chambers); `api_tokens.user_id` names the owner of a personal token, which acts as that person with
 *   their role. Service tokens (tool hosts) have no owner.
 * `scope` is dropped with plain `ALTER TABLE … DROP COLUMN` (SQLite ≥ 3.35 and PostgreSQL): Knex's own
 * SQLite dropColumn rebuilds the table, which inside the migration's transaction cannot switch foreign
 * keys off while ingest_files points at api_tokens.
 */
import type { Knex } from 'knex';

export async function up(knex: Knex): Promise<void> {
	for (const table of ['areas', 'tools', 'chambers']) {
		await knex.schema.alterTable(table, (t) => {
			t.bigInteger('retired_at');
		});
	}
	await knex.schema.alterTable('api_tokens', (t) => {
		t.string('scopes', 64);
	});
	// Raw, because Knex rebuilds an SQLite table to add a foreign key, and inside the migration's
	// transaction that rebuild cannot drop api_tokens while ingest_files rows point at it.
	// (The column survives a rollback on SQLite: see down.)
	if (!(await knex.schema.hasColumn('api_tokens', 'user_id')))
		await knex.raw('ALTER TABLE api_tokens ADD COLUMN user_id varchar(40) REFERENCES users (id)');
	await knex.schema.alterTable('api_tokens', (t) => {
		t.index(['user_id']);
	});
	await knex('api_tokens').update({ scopes: knex.ref('scope') });
	await knex.raw('ALTER TABLE api_tokens DROP COLUMN scope');
}

export async function down(knex: Knex): Promise<void> {
	await knex.schema.alterTable('api_tokens', (t) => {
		t.string('scope', 16);
	});
	// The old column held one scope: a token with several keeps the one a tool host needs most.
	await knex('api_tokens').update({ scope: knex.raw("CASE WHEN scopes LIKE '%ingest%' THEN 'ingest' ELSE 'read' END") });
	await knex('api_tokens').whereNotNull('user_id').delete();
	await knex.schema.alterTable('api_tokens', (t) => {
		t.dropIndex(['user_id']);
	});
	// SQLite cannot drop a column that carries a foreign key, and rebuilding the table fails while
	// ingest_files points at it: there the emptied column stays (nullable, unread by the older code).
	if (knex.client.config.client === 'pg') await knex.raw('ALTER TABLE api_tokens DROP COLUMN user_id');
	await knex.raw('ALTER TABLE api_tokens DROP COLUMN scopes');
	for (const table of ['areas', 'tools', 'chambers']) await knex.raw(`ALTER TABLE ${table} DROP COLUMN retired_at`);
}
