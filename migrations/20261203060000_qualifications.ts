/**
 * Qualification campaigns: one request drafts baselines for many chamber × recipe steps in the
 * background. The campaign and each of its drafts are rows, so progress survives a restart and any
 * process can answer for it (the scheduled job resumes what a stopped process left).
 */
import type { Knex } from 'knex';

export async function up(knex: Knex): Promise<void> {
	await knex.schema.createTable('qualification_campaigns', (t) => {
		t.increments('id');
		// 'campaign': asked for by an engineer; 'requalify': proposed by Lockstep after a wet clean
		t.string('kind', 16).notNullable().defaultTo('campaign').checkIn(['campaign', 'requalify']);
		t.string('state', 16).notNullable().checkIn(['drafting', 'review', 'approved', 'failed']);
		t.text('golden_json').notNullable(); // the golden rule as asked
		t.string('components', 8).notNullable().defaultTo('auto');
		t.string('label', 200).notNullable();
		t.string('created_by', 40).references('id').inTable('users');
		t.bigInteger('created_at').notNullable();
		t.bigInteger('finished_at');
		t.string('approved_by', 40).references('id').inTable('users');
		t.bigInteger('approved_at');
		t.string('rescore_state', 16).checkIn(['running', 'done', 'failed']);
		t.text('message');
		t.index(['state']);
	});
	await knex.schema.createTable('qualification_drafts', (t) => {
		t.increments('id');
		t.integer('campaign_id').notNullable().references('id').inTable('qualification_campaigns').onDelete('CASCADE');
		t.integer('chamber_id').notNullable().references('id').inTable('chambers');
		t.integer('recipe_step_id').notNullable().references('id').inTable('recipe_steps');
		t.string('state', 16).notNullable().defaultTo('pending').checkIn(['pending', 'working', 'drafted', 'failed', 'approved', 'discarded']);
		// set when a process takes the draft; a claim older than the lease is taken over
		t.bigInteger('claimed_at');
		t.integer('baseline_id').references('id').inTable('baselines').onDelete('SET NULL');
		t.integer('candidates');
		t.text('screened_out_json'); // [{waferStepId, waferId, reason}]
		t.text('warnings_json'); // string[]
		t.text('message'); // why no draft could be fitted
		t.bigInteger('golden_from');
		// rescoring after approval: null (not asked), pending, running (claimed_at), done, failed
		t.string('rescore_state', 16).checkIn(['pending', 'running', 'done', 'failed']);
		t.bigInteger('rescore_claimed_at');
		t.integer('rescored');
		t.unique(['campaign_id', 'chamber_id', 'recipe_step_id']);
		t.index(['state']);
		t.index(['rescore_state']);
	});
}

export async function down(knex: Knex): Promise<void> {
	await knex.schema.dropTable('qualification_drafts');
	await knex.schema.dropTable('qualification_campaigns');
}
