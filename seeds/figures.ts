/**
 * `node --import tsx seeds/figures.ts [--volume-days N]`: the demo's false-alarm figures
 * (demo-figures.ts) for the database already seeded in LOCKSTEP_DATA_DIR. The scenario is rebuilt
 * from the chambers' creation time (the window's start); --volume-days (default
 * LOCKSTEP_DEMO_VOLUME_DAYS, else 3) must be what the seed used, as it sets where the tail begins.
 */
import { parseArgs } from 'node:util';
import { closeDb, db } from '../src/lib/server/db.ts';
import { buildScenario, DEFAULT_DAYS } from './demo/index.ts';
import { demoFigures, formatFigures } from './demo-figures.ts';
import { demoVolumeDays } from './demo-seed.ts';

const { values } = parseArgs({ options: { 'volume-days': { type: 'string' } } });

async function main() {
	const k = db();
	const first = await k('chambers').min({ t: 'created_at' }).first();
	if (!first?.t) throw new Error('no chambers: seed the demo first (npm run db:seed)');
	const realVolumeDays = demoVolumeDays({ LOCKSTEP_DEMO_VOLUME_DAYS: values['volume-days'] ?? process.env.LOCKSTEP_DEMO_VOLUME_DAYS });
	const scenario = buildScenario({ end: new Date(Number(first.t) + DEFAULT_DAYS * 86_400_000), realVolumeDays });
	for (const l of formatFigures(await demoFigures(k, scenario))) console.log(l);
}

main()
	.catch((e) => {
		console.error(e instanceof Error ? (e.stack ?? e.message) : e);
		process.exitCode = 1;
	})
	.finally(() => closeDb());
