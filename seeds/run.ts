/**
 * `npm run db:seed`: migrate, then load the demo fab when the database is empty.
 * Safe to run again: it does nothing on a database that already has data.
 */
import { parseArgs } from 'node:util';
import { closeDb, db, migrateLatest } from '../src/lib/server/db.ts';
import { seedDemo } from './demo-seed.ts';

const { values } = parseArgs({ options: { quiet: { type: 'boolean', default: false } } });

async function main() {
	const k = db();
	await migrateLatest(k);
	const report = await seedDemo(k, { log: values.quiet ? () => {} : (s: string) => console.log(s) });
	if (values.quiet) console.log(report.split('\n')[0]);
}

main()
	.catch((e) => {
		console.error(e instanceof Error ? (e.stack ?? e.message) : e);
		process.exitCode = 1;
	})
	.finally(() => closeDb());
