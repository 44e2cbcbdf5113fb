/**
 * Seasoning wafers in the rollups: they are counted, but kept out of the worst ratios, so a day with
 * a wet clean does not paint the chamber beyond its limit for wafers whose alarms the policy holds.
 */
import type { Knex } from 'knex';

export async function up(knex: Knex): Promise<void> {
	await knex.schema.alterTable('hourly_rollups', (t) => {
		t.integer('seasoning_wafer_count').notNullable().defaultTo(0);
	});
}

export async function down(knex: Knex): Promise<void> {
	await knex.schema.alterTable('hourly_rollups', (t) => {
		t.dropColumn('seasoning_wafer_count');
	});
}
