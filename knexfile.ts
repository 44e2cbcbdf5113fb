/** Knex configuration for the CLI (`npm run db:migrate`, `db:rollback`). The app uses src/lib/server/db.ts. */
import type { Knex } from 'knex';
import { knexConfig } from './src/lib/server/db-config.ts';

const config: Knex.Config = knexConfig();
export default config;
