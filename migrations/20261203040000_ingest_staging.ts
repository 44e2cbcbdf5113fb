/**
 * Staged rows of a file being published (issue 13): a large file's rows are copied here in short
 * transactions, then moved into wafer_steps by one INSERT … SELECT (the "flip"), so the write lock is
 * never held for a whole file while it stays stored whole or not at all. `ingest_files.staging_json`
 * records what the file created (recipes, recipe steps, chambers) so that an interrupted publish can be
 * undone when the process that owns it starts again.
 */
import type { Knex } from 'knex';

export async function up(knex: Knex): Promise<void> {
	await knex.schema.createTable('ingest_staged_rows', (t) => {
		t.increments('id');
		t.integer('ingest_file_id').notNullable().references('id').inTable('ingest_files').onDelete('CASCADE');
		t.string('wafer_id', 64).notNullable();
		t.string('lot_id', 64).notNullable();
		t.integer('slot');
		t.integer('chamber_id').notNullable();
		t.integer('recipe_step_id').notNullable();
		t.bigInteger('processed_at').notNullable();
		t.integer('feature_set_version').notNullable();
		t.binary('feature_values').notNullable();
		t.double('rf_on_s');
		t.bigInteger('created_at').notNullable();
		t.index(['ingest_file_id']);
	});
	await knex.schema.alterTable('ingest_files', (t) => {
		t.text('staging_json');
	});
	// the publish scores a file's rows by file after the flip, and recovery finds them the same way
	await knex.schema.alterTable('wafer_steps', (t) => {
		t.index(['ingest_file_id', 'scoring_state']);
	});
}

export async function down(knex: Knex): Promise<void> {
	await knex.schema.alterTable('wafer_steps', (t) => {
		t.dropIndex(['ingest_file_id', 'scoring_state']);
	});
	await knex.schema.alterTable('ingest_files', (t) => {
		t.dropColumn('staging_json');
	});
	await knex.schema.dropTable('ingest_staged_rows');
}
