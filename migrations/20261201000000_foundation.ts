/**
 * Lockstep's foundation schema.
 *
 * Conventions (so PostgreSQL stays a config change):
 * - every `*_at` column is a UTC instant in epoch milliseconds (bigInteger); the repositories convert;
 * - JSON is stored as text (`*_json`), binary as blob/bytea (`binary` in Knex);
 * - booleans via Knex `boolean` (0/1 in SQLite);
 * - partial unique indexes (supported by SQLite ≥ 3.8 and PostgreSQL) enforce "one active baseline" and
 *   "one open alarm per chamber × step × rule".
 */
import type { Knex } from 'knex';

export async function up(knex: Knex): Promise<void> {
	await knex.schema.createTable('users', (t) => {
		t.string('id', 40).primary();
		t.string('username', 64).notNullable().unique();
		t.string('display_name', 120).notNullable();
		t.string('email', 254);
		t.string('role', 16).notNullable().checkIn(['viewer', 'engineer', 'admin']);
		t.string('password_hash', 255).notNullable();
		t.string('time_zone', 64).notNullable().defaultTo('UTC');
		t.bigInteger('created_at').notNullable();
		t.bigInteger('password_changed_at').notNullable();
		t.bigInteger('disabled_at');
	});
	// Lucia sessions. `id` holds the SHA-256 of the cookie token, never the token itself.
	await knex.schema.createTable('sessions', (t) => {
		t.string('id', 64).primary();
		t.string('user_id', 40).notNullable().references('id').inTable('users').onDelete('CASCADE');
		t.bigInteger('expires_at').notNullable();
		t.bigInteger('created_at').notNullable();
		t.string('client_address', 64);
		t.index(['user_id']);
	});
	await knex.schema.createTable('sign_in_attempts', (t) => {
		t.increments('id');
		t.string('username', 64).notNullable();
		t.string('client_address', 64).notNullable();
		t.bigInteger('at').notNullable();
		t.boolean('success').notNullable();
		t.index(['username', 'at']);
		t.index(['client_address', 'at']);
	});
	await knex.schema.createTable('api_tokens', (t) => {
		t.increments('id');
		t.string('name', 120).notNullable();
		t.string('token_hash', 64).notNullable().unique();
		t.string('prefix', 16).notNullable();
		t.string('scope', 16).notNullable().checkIn(['ingest', 'read']);
		t.string('created_by', 40).references('id').inTable('users');
		t.bigInteger('created_at').notNullable();
		t.bigInteger('last_used_at');
		t.bigInteger('revoked_at');
	});
	await knex.schema.createTable('settings', (t) => {
		t.string('key', 64).primary();
		t.text('value_json').notNullable();
		t.string('updated_by', 40).references('id').inTable('users');
		t.bigInteger('updated_at').notNullable();
	});

	// ── Fab structure ────────────────────────────────────────────────────────────
	await knex.schema.createTable('areas', (t) => {
		t.increments('id');
		t.string('code', 32).notNullable().unique();
		t.string('name', 120).notNullable();
	});
	await knex.schema.createTable('tools', (t) => {
		t.increments('id');
		t.string('code', 32).notNullable().unique();
		t.string('name', 120).notNullable();
		t.string('model', 120);
		t.integer('area_id').notNullable().references('id').inTable('areas');
	});
	await knex.schema.createTable('chambers', (t) => {
		t.increments('id');
		t.string('code', 32).notNullable().unique();
		t.string('name', 120).notNullable();
		t.integer('tool_id').notNullable().references('id').inTable('tools');
		// Set by a wet clean or part swap (policy); cleared when a new baseline is approved.
		t.bigInteger('requalify_since');
		t.string('requalify_reason', 200);
		t.bigInteger('created_at').notNullable();
	});
	await knex.schema.createTable('recipes', (t) => {
		t.increments('id');
		t.string('code', 64).notNullable().unique();
		t.string('name', 120).notNullable();
		t.string('chemistry', 200);
	});
	await knex.schema.createTable('recipe_steps', (t) => {
		t.increments('id');
		t.integer('recipe_id').notNullable().references('id').inTable('recipes');
		t.string('name', 64).notNullable();
		t.integer('position').notNullable().defaultTo(0);
		// The feature set in force; a file with a different set is refused until an engineer accepts it.
		t.integer('feature_set_version').notNullable().defaultTo(1);
		t.unique(['recipe_id', 'name']);
	});
	// The catalog: which column of a wafer-step's packed vector is which feature.
	await knex.schema.createTable('features', (t) => {
		t.increments('id');
		t.integer('recipe_step_id').notNullable().references('id').inTable('recipe_steps');
		t.integer('set_version').notNullable().defaultTo(1);
		t.integer('position').notNullable();
		t.string('name', 64).notNullable();
		t.string('kind', 16).notNullable().checkIn(['oes', 'sensor', 'derived']);
		t.double('wavelength_nm');
		t.string('unit', 32);
		t.unique(['recipe_step_id', 'set_version', 'position']);
		t.unique(['recipe_step_id', 'set_version', 'name']);
	});

	// ── Ingest ───────────────────────────────────────────────────────────────────
	await knex.schema.createTable('ingest_files', (t) => {
		t.increments('id');
		t.string('source', 16).notNullable().checkIn(['inbox', 'upload', 'api', 'seed']);
		t.string('original_name', 255).notNullable();
		t.string('sha256', 64).notNullable();
		t.bigInteger('size_bytes').notNullable();
		t.string('status', 16).notNullable().checkIn(['processing', 'done', 'rejected', 'failed']);
		t.bigInteger('received_at').notNullable();
		t.bigInteger('finished_at');
		t.integer('rows_total').notNullable().defaultTo(0);
		t.integer('rows_accepted').notNullable().defaultTo(0);
		t.integer('rows_rejected').notNullable().defaultTo(0);
		t.integer('rows_duplicate').notNullable().defaultTo(0);
		t.text('report_json');
		t.string('submitted_by', 40).references('id').inTable('users');
		t.integer('api_token_id').references('id').inTable('api_tokens');
		t.index(['sha256']);
		t.index(['received_at']);
	});
	await knex.schema.createTable('ingest_rejections', (t) => {
		t.increments('id');
		t.integer('ingest_file_id').notNullable().references('id').inTable('ingest_files').onDelete('CASCADE');
		t.integer('line').notNullable();
		t.string('column', 128);
		t.text('value');
		t.text('reason').notNullable();
		t.index(['ingest_file_id', 'line']);
	});

	// ── Wafers ───────────────────────────────────────────────────────────────────
	// One row per wafer × recipe step. `feature_values` is a little-endian Float64 vector aligned with the
	// catalog (features.position of `feature_set_version`): 512 features are 4,096 bytes, so 1 M wafer-steps
	// fit in ≈ 4.5 GB with the row overhead, and a wafer-step loads in one read.
	await knex.schema.createTable('wafer_steps', (t) => {
		t.increments('id');
		t.string('wafer_id', 64).notNullable();
		t.string('lot_id', 64).notNullable();
		t.integer('slot');
		t.integer('chamber_id').notNullable().references('id').inTable('chambers');
		t.integer('recipe_step_id').notNullable().references('id').inTable('recipe_steps');
		t.bigInteger('processed_at').notNullable();
		t.boolean('golden').notNullable().defaultTo(false);
		t.integer('feature_set_version').notNullable();
		t.binary('feature_values').notNullable();
		t.double('rf_on_s');
		t.string('scoring_state', 16).notNullable().defaultTo('pending').checkIn(['pending', 'scored', 'no_baseline', 'error']);
		t.integer('ingest_file_id').references('id').inTable('ingest_files');
		t.bigInteger('created_at').notNullable();
		t.unique(['wafer_id', 'recipe_step_id']);
		t.index(['chamber_id', 'recipe_step_id', 'processed_at']);
		t.index(['processed_at']);
		t.index(['lot_id']);
	});

	// ── Baselines ────────────────────────────────────────────────────────────────
	await knex.schema.createTable('baselines', (t) => {
		t.increments('id');
		t.string('scope', 16).notNullable().defaultTo('chamber').checkIn(['chamber', 'fleet']);
		t.integer('chamber_id').references('id').inTable('chambers'); // null for a fleet model
		t.integer('recipe_step_id').notNullable().references('id').inTable('recipe_steps');
		t.integer('version').notNullable();
		t.string('status', 16).notNullable().checkIn(['draft', 'active', 'retired']);
		t.integer('feature_set_version').notNullable();
		t.double('alpha').notNullable();
		t.double('warning_alpha').notNullable();
		t.integer('k').notNullable();
		t.integer('n').notNullable();
		t.string('scaling', 16).notNullable();
		t.double('t2_limit').notNullable();
		t.double('q_limit').notNullable();
		t.double('t2_warning_limit').notNullable();
		t.double('q_warning_limit').notNullable();
		t.double('phi_limit');
		t.binary('model').notNullable(); // the engine's compact serialization
		t.text('summary_json').notNullable(); // explained variance, flagged features, method notes
		t.bigInteger('train_from');
		t.bigInteger('train_to');
		t.string('built_by', 40).references('id').inTable('users');
		t.bigInteger('built_at').notNullable();
		t.string('approved_by', 40).references('id').inTable('users');
		t.bigInteger('approved_at');
		t.bigInteger('retired_at');
		t.text('note');
		t.unique(['scope', 'chamber_id', 'recipe_step_id', 'version']);
	});
	await knex.raw(
		`CREATE UNIQUE INDEX baselines_one_active ON baselines (scope, chamber_id, recipe_step_id) WHERE status = 'active'`
	);
	await knex.schema.createTable('baseline_training_wafers', (t) => {
		t.integer('baseline_id').notNullable().references('id').inTable('baselines').onDelete('CASCADE');
		t.integer('wafer_step_id').notNullable().references('id').inTable('wafer_steps');
		t.primary(['baseline_id', 'wafer_step_id']);
	});

	// ── Scores and rollups ───────────────────────────────────────────────────────
	await knex.schema.createTable('scores', (t) => {
		t.increments('id');
		t.integer('wafer_step_id').notNullable().references('id').inTable('wafer_steps');
		t.integer('baseline_id').notNullable().references('id').inTable('baselines');
		// Denormalised from wafer_steps so time-range queries per chamber read one index.
		t.integer('chamber_id').notNullable().references('id').inTable('chambers');
		t.integer('recipe_step_id').notNullable().references('id').inTable('recipe_steps');
		t.bigInteger('processed_at').notNullable();
		t.double('t2').notNullable();
		t.double('q').notNullable();
		t.double('t2_limit').notNullable();
		t.double('q_limit').notNullable();
		t.double('t2_ratio').notNullable();
		t.double('q_ratio').notNullable();
		t.double('phi_ratio');
		t.double('worst_ratio').notNullable();
		t.bigInteger('scored_at').notNullable();
		// A wafer rescored against a newer baseline keeps its old score (history) with current = false.
		t.boolean('current').notNullable().defaultTo(true);
		// Within the seasoning window after a wet clean: scored and shown, but the wafer rules hold their alarms.
		t.boolean('seasoning').notNullable().defaultTo(false);
		t.unique(['wafer_step_id', 'baseline_id']);
		t.index(['chamber_id', 'recipe_step_id', 'processed_at']);
		t.index(['processed_at']);
	});
	await knex.schema.createTable('hourly_rollups', (t) => {
		t.integer('chamber_id').notNullable().references('id').inTable('chambers');
		t.integer('recipe_step_id').notNullable().references('id').inTable('recipe_steps');
		t.bigInteger('hour_at').notNullable();
		t.integer('wafer_count').notNullable();
		t.double('worst_ratio');
		t.double('worst_t2_ratio');
		t.double('worst_q_ratio');
		t.integer('worst_wafer_step_id').references('id').inTable('wafer_steps');
		t.integer('alarm_wafer_count').notNullable().defaultTo(0);
		t.primary(['chamber_id', 'recipe_step_id', 'hour_at']);
		t.index(['hour_at']);
	});

	// ── Alarms ───────────────────────────────────────────────────────────────────
	await knex.schema.createTable('cause_codes', (t) => {
		t.increments('id');
		t.string('code', 32).notNullable().unique();
		t.string('title', 200).notNullable();
		t.string('category', 32).notNullable().checkIn(['hardware', 'consumable', 'process', 'sensor', 'false_alarm', 'other']);
		t.boolean('active').notNullable().defaultTo(true);
		t.bigInteger('created_at').notNullable();
	});
	await knex.schema.createTable('alarms', (t) => {
		t.increments('id');
		t.integer('chamber_id').notNullable().references('id').inTable('chambers');
		t.integer('recipe_step_id').notNullable().references('id').inTable('recipe_steps');
		t.string('rule', 32).notNullable();
		t.string('severity', 16).notNullable().checkIn(['warning', 'alarm']);
		t.string('state', 16).notNullable().checkIn(['open', 'acknowledged', 'closed']);
		t.integer('baseline_id').references('id').inTable('baselines');
		t.bigInteger('opened_at').notNullable();
		t.bigInteger('last_seen_at').notNullable();
		t.integer('first_wafer_step_id').references('id').inTable('wafer_steps');
		t.integer('last_wafer_step_id').references('id').inTable('wafer_steps');
		t.integer('worst_wafer_step_id').references('id').inTable('wafer_steps');
		t.double('worst_ratio');
		t.integer('wafer_count').notNullable().defaultTo(1);
		t.text('detail_json');
		t.bigInteger('acknowledged_at');
		t.bigInteger('closed_at');
		t.index(['state', 'opened_at']);
		t.index(['chamber_id', 'opened_at']);
	});
	await knex.raw(
		`CREATE UNIQUE INDEX alarms_one_live ON alarms (chamber_id, recipe_step_id, rule) WHERE state <> 'closed'`
	);
	// The audit trail: append-only; the triggers below refuse UPDATE and DELETE.
	await knex.schema.createTable('alarm_actions', (t) => {
		t.increments('id');
		t.integer('alarm_id').notNullable().references('id').inTable('alarms');
		t.bigInteger('at').notNullable();
		t.string('user_id', 40).references('id').inTable('users');
		t.string('action', 16).notNullable().checkIn(['opened', 'acknowledged', 'closed', 'reopened', 'commented']);
		t.string('from_state', 16);
		t.string('to_state', 16);
		t.integer('cause_code_id').references('id').inTable('cause_codes');
		t.string('disposition', 24).checkIn(['continue', 'hold_recommended', 'requalify']);
		t.text('comment');
		t.index(['alarm_id', 'at']);
	});
	if (knex.client.config.client === 'pg') {
		await knex.raw(`CREATE FUNCTION lockstep_append_only() RETURNS trigger AS $$
			BEGIN RAISE EXCEPTION 'alarm_actions is append-only'; END; $$ LANGUAGE plpgsql`);
		await knex.raw(`CREATE TRIGGER alarm_actions_no_update BEFORE UPDATE OR DELETE ON alarm_actions
			FOR EACH ROW EXECUTE FUNCTION lockstep_append_only()`);
	} else {
		await knex.raw(`CREATE TRIGGER alarm_actions_no_update BEFORE UPDATE ON alarm_actions
			BEGIN SELECT RAISE(ABORT, 'alarm_actions is append-only'); END`);
		await knex.raw(`CREATE TRIGGER alarm_actions_no_delete BEFORE DELETE ON alarm_actions
			BEGIN SELECT RAISE(ABORT, 'alarm_actions is append-only'); END`);
	}

	// ── Maintenance ──────────────────────────────────────────────────────────────
	await knex.schema.createTable('maintenance_events', (t) => {
		t.increments('id');
		t.integer('chamber_id').notNullable().references('id').inTable('chambers');
		t.string('kind', 16).notNullable().checkIn(['wet_clean', 'part_swap', 'pm', 'other']);
		t.bigInteger('at').notNullable();
		t.string('user_id', 40).references('id').inTable('users');
		t.text('comment');
		t.bigInteger('created_at').notNullable();
		t.index(['chamber_id', 'at']);
	});

	// ── Mail ─────────────────────────────────────────────────────────────────────
	await knex.schema.createTable('mail_subscriptions', (t) => {
		t.increments('id');
		t.string('user_id', 40).notNullable().unique().references('id').inTable('users').onDelete('CASCADE');
		t.string('email', 254).notNullable();
		t.text('area_codes_json').notNullable().defaultTo('[]'); // empty = all areas
		t.text('chamber_codes_json').notNullable().defaultTo('[]');
		t.boolean('digest_enabled').notNullable().defaultTo(true);
		t.string('digest_time', 5).notNullable().defaultTo('06:30');
		t.string('time_zone', 64).notNullable().defaultTo('UTC');
		t.boolean('alarm_mails').notNullable().defaultTo(false);
		t.string('alarm_min_severity', 16).notNullable().defaultTo('alarm');
		t.boolean('weekly_summary').notNullable().defaultTo(false);
		t.bigInteger('last_digest_period_end');
		t.bigInteger('updated_at').notNullable();
	});
	await knex.schema.createTable('mail_outbox', (t) => {
		t.increments('id');
		t.string('kind', 24).notNullable();
		t.string('to_address', 254).notNullable();
		t.string('subject', 300).notNullable();
		t.text('text_body').notNullable();
		t.text('html_body');
		// e.g. "digest:<user>:<period end>": the unique key is what makes a digest go out once.
		t.string('dedupe_key', 200).unique();
		t.string('state', 16).notNullable().defaultTo('queued').checkIn(['queued', 'sending', 'sent', 'failed']);
		t.integer('attempts').notNullable().defaultTo(0);
		t.bigInteger('next_attempt_at').notNullable();
		t.text('last_error');
		t.bigInteger('created_at').notNullable();
		t.bigInteger('sent_at');
		t.index(['state', 'next_attempt_at']);
	});
}

export async function down(knex: Knex): Promise<void> {
	for (const table of [
		'mail_outbox',
		'mail_subscriptions',
		'maintenance_events',
		'alarm_actions',
		'alarms',
		'cause_codes',
		'hourly_rollups',
		'scores',
		'baseline_training_wafers',
		'baselines',
		'wafer_steps',
		'ingest_rejections',
		'ingest_files',
		'features',
		'recipe_steps',
		'recipes',
		'chambers',
		'tools',
		'areas',
		'settings',
		'api_tokens',
		'sign_in_attempts',
		'sessions',
		'users'
	]) {
		await knex.schema.dropTableIfExists(table);
	}
	if (knex.client.config.client === 'pg') await knex.raw('DROP FUNCTION IF EXISTS lockstep_append_only()');
}
