/**
 * The list of migrations, imported statically so that Vite (web server, vitest) and tsx (jobs, seeds,
 * the knex CLI) share one source — Knex's directory loader cannot read .ts inside a Vite bundle.
 * Add each new migration here, in order; the name must stay the file name.
 */
import type { Knex } from 'knex';
import * as foundation from './20261201000000_foundation.ts';
import * as defaultCauseCodes from './20261201000100_default_cause_codes.ts';
import * as fleetMatches from './20261201000200_fleet_matches.ts';
import * as rollupIndex from './20261201000300_rollup_covering_index.ts';
import * as mail from './20261201020000_mail.ts';
import * as featureSetProposals from './20261201030000_feature_set_proposals.ts';
import * as rollupSeasoning from './20261201040000_rollup_seasoning.ts';
import * as alarmEpisodes from './20261203020000_alarm_episodes.ts';
import * as fleetRuns from './20261203030000_fleet_runs.ts';
import * as ingestStaging from './20261203040000_ingest_staging.ts';
import * as structureAndTokens from './20261203050000_structure_and_tokens.ts';
import * as qualifications from './20261203060000_qualifications.ts';

const migrations: Record<string, Knex.Migration> = {
	'20261201000000_foundation.ts': foundation,
	'20261201000100_default_cause_codes.ts': defaultCauseCodes,
	'20261201000200_fleet_matches.ts': fleetMatches,
	'20261201000300_rollup_covering_index.ts': rollupIndex,
	'20261201020000_mail.ts': mail,
	'20261201030000_feature_set_proposals.ts': featureSetProposals,
	'20261201040000_rollup_seasoning.ts': rollupSeasoning,
	'20261203020000_alarm_episodes.ts': alarmEpisodes,
	'20261203030000_fleet_runs.ts': fleetRuns,
	'20261203040000_ingest_staging.ts': ingestStaging,
	'20261203050000_structure_and_tokens.ts': structureAndTokens,
	'20261203060000_qualifications.ts': qualifications
};

export const migrationSource: Knex.MigrationSource<string> = {
	async getMigrations() {
		return Object.keys(migrations);
	},
	getMigrationName(name) {
		return name;
	},
	async getMigration(name) {
		return migrations[name];
	}
};
