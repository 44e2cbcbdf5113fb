/**
 * `npm run jobs`: the scheduler. Migrates the database, then runs every job in registry.ts on its
 * schedule. SIGTERM / SIGINT stop the schedules, let a running job finish (up to 30 s; an unfinished
 * ingest rolls back and is redone on the next start) and close the database.
 */
import cron, { type ScheduledTask } from 'node-cron';
import { closeDb, migrateLatest } from '../src/lib/server/db.ts';
import { JOBS } from './registry.ts';
import { yieldToWebServer } from './priority.ts';

const running = new Map<string, Promise<unknown>>();
const tasks: ScheduledTask[] = [];

function start(): void {
	for (const job of JOBS) {
		if (!cron.validate(job.schedule)) throw new Error(`job ${job.name}: "${job.schedule}" is not a cron expression`);
		tasks.push(
			cron.schedule(
				job.schedule,
				() => {
					if (running.has(job.name)) return; // still busy with the previous tick
					const p = job
						.run()
						.catch((e) => console.error(`job ${job.name} failed:`, e))
						.finally(() => running.delete(job.name));
					running.set(job.name, p);
				},
				{ name: job.name }
			)
		);
		console.log(`jobs: ${job.name} scheduled (${job.schedule})`);
	}
}

let stopping = false;
async function shutdown(signal: string): Promise<void> {
	if (stopping) return;
	stopping = true;
	console.log(`jobs: ${signal}, stopping`);
	for (const t of tasks) await t.stop();
	const timeout = new Promise((r) => setTimeout(r, 30_000).unref());
	await Promise.race([Promise.allSettled([...running.values()]), timeout]);
	await closeDb();
	process.exit(0);
}

process.on('SIGTERM', () => void shutdown('SIGTERM'));
process.on('SIGINT', () => void shutdown('SIGINT'));

yieldToWebServer();
await migrateLatest();
start();
