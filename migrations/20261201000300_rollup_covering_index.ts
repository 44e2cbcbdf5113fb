/**
 * A covering index for the fleet heatmap: the 30-day view reads every column it needs from the index
 * in hour order, without touching the table (measured in bench/heatmap.ts).
 */
import type { Knex } from 'knex';

export async function up(knex: Knex): Promise<void> {
	await knex.schema.alterTable('hourly_rollups', (t) => {
		t.index(
			['hour_at', 'chamber_id', 'recipe_step_id', 'wafer_count', 'worst_ratio', 'worst_t2_ratio', 'worst_q_ratio', 'worst_wafer_step_id', 'alarm_wafer_count'],
			'hourly_rollups_heatmap_covering'
		);
	});
}

export async function down(knex: Knex): Promise<void> {
	await knex.schema.alterTable('hourly_rollups', (t) => {
		t.dropIndex([], 'hourly_rollups_heatmap_covering');
	});
}
