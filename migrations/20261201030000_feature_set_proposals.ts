/**
 * Feature-set proposals: when a file's feature columns differ from its recipe step's set, the rows of
 * that step are refused and the file's columns are kept here, in the same transaction, as a proposed
 * new set that an engineer accepts (a new catalog version) or dismisses.
 *
 * One pending proposal per recipe step × base set × column set: further files with the same columns
 * are counted on it instead of listed again.
 */
import type { Knex } from 'knex';

export async function up(knex: Knex): Promise<void> {
	await knex.schema.createTable('feature_set_proposals', (t) => {
		t.increments('id');
		t.integer('recipe_step_id').notNullable().references('id').inTable('recipe_steps');
		// The step's set the file was compared with; accepting is refused once the step has moved on.
		t.integer('base_set_version').notNullable();
		// The feature column names in the first file's order (the order of the new catalog).
		t.text('columns_json').notNullable();
		// SHA-256 of the names sorted and joined: the same columns in another order are the same set.
		t.string('signature', 64).notNullable();
		t.text('added_json').notNullable();
		t.text('missing_json').notNullable();
		t.integer('ingest_file_id').notNullable().references('id').inTable('ingest_files');
		t.integer('last_ingest_file_id').notNullable().references('id').inTable('ingest_files');
		t.integer('file_count').notNullable().defaultTo(1);
		t.integer('rows_refused').notNullable().defaultTo(0);
		t.string('status', 16).notNullable().checkIn(['pending', 'accepted', 'dismissed', 'superseded']);
		t.bigInteger('created_at').notNullable();
		t.bigInteger('decided_at');
		t.string('decided_by', 40).references('id').inTable('users');
		// Set when accepted: the catalog version created from these columns.
		t.integer('accepted_set_version');
		t.index(['status', 'created_at']);
		t.index(['recipe_step_id', 'status']);
	});
	await knex.raw(
		`CREATE UNIQUE INDEX feature_set_proposals_one_pending ON feature_set_proposals (recipe_step_id, base_set_version, signature) WHERE status = 'pending'`
	);
}

export async function down(knex: Knex): Promise<void> {
	await knex.schema.dropTableIfExists('feature_set_proposals');
}
