/** Results of each fleet-matching run: one row per chamber × recipe step × run. */
import type { Knex } from 'knex';

export async function up(knex: Knex): Promise<void> {
	await knex.schema.createTable('fleet_matches', (t) => {
		t.increments('id');
		t.bigInteger('run_at').notNullable();
		t.integer('recipe_step_id').notNullable().references('id').inTable('recipe_steps');
		t.integer('chamber_id').notNullable().references('id').inTable('chambers');
		t.integer('fleet_baseline_id').notNullable().references('id').inTable('baselines');
		t.integer('wafers').notNullable();
		t.bigInteger('window_from').notNullable();
		t.bigInteger('window_to').notNullable();
		t.integer('last_wafer_step_id').references('id').inTable('wafer_steps');
		t.double('distance').notNullable();
		t.double('modified_z').notNullable();
		t.boolean('flagged').notNullable();
		t.text('separating_json').notNullable();
		t.index(['recipe_step_id', 'run_at']);
		t.index(['chamber_id', 'run_at']);
	});
}

export async function down(knex: Knex): Promise<void> {
	await knex.schema.dropTableIfExists('fleet_matches');
}
