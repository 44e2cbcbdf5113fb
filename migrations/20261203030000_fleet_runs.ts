/**
 * Fleet matching on any installation: every run (or skip, with its reason) is recorded, and each fleet
 * model keeps the reference it was built from (the approved chamber baselines, so a change of any of
 * them makes it stale) and its within/between-chamber variances. fleet_matches gains the chamber's
 * p-values and the run's threshold; its `modified_z` column now holds the standardized statistic z of
 * monitoring/fleet.ts (the normal score of the chamber's fleet-adjusted p-value), kept under its old
 * name so the screens that read it need no change of schema.
 */
import type { Knex } from 'knex';

export async function up(knex: Knex): Promise<void> {
	await knex.schema.createTable('fleet_runs', (t) => {
		t.increments('id');
		t.integer('recipe_step_id').notNullable().references('id').inTable('recipe_steps');
		t.bigInteger('run_at').notNullable();
		t.string('trigger', 16).notNullable(); // schedule | manual | api | replay
		t.string('status', 16).notNullable().checkIn(['ran', 'skipped']);
		t.text('reason');
		t.integer('chambers').notNullable().defaultTo(0);
		t.integer('flagged').notNullable().defaultTo(0);
		t.integer('fleet_baseline_id').references('id').inTable('baselines');
		t.double('alpha');
		t.double('threshold');
		t.bigInteger('created_at').notNullable();
		t.index(['recipe_step_id', 'run_at']);
	});
	await knex.schema.createTable('fleet_references', (t) => {
		t.integer('fleet_baseline_id').primary().references('id').inTable('baselines');
		t.integer('recipe_step_id').notNullable().references('id').inTable('recipe_steps');
		// sorted ids of the active chamber baselines whose golden wafers built it
		t.text('source_baselines_json').notNullable();
		t.integer('chambers').notNullable();
		t.integer('golden_wafers').notNullable();
		t.text('reference_json').notNullable();
		t.bigInteger('built_at').notNullable();
	});
	await knex.schema.alterTable('fleet_matches', (t) => {
		t.integer('run_id').references('id').inTable('fleet_runs');
		t.double('p_value');
		t.double('threshold');
		// the chamber's median statistic over its features (its broadband shift; the leak rule reads above it)
		t.double('median_z');
	});
}

export async function down(knex: Knex): Promise<void> {
	await knex.schema.alterTable('fleet_matches', (t) => {
		t.dropColumn('run_id');
		t.dropColumn('p_value');
		t.dropColumn('threshold');
		t.dropColumn('median_z');
	});
	await knex.schema.dropTableIfExists('fleet_references');
	await knex.schema.dropTableIfExists('fleet_runs');
}
