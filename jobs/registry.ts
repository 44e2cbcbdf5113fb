/**
 * The scheduled jobs. Each runs on its cron expression, never overlapping itself; add new jobs (mail
 * digests, retention) here.
 */
import { config } from '../src/lib/server/config.ts';
import { runInbox } from './ingest-inbox.ts';
import { runFleetJob } from './fleet-matching.ts';
import { runMailSchedule } from './mail-digests.ts';
import { runOutbox } from './mail-outbox.ts';
import { runQualificationJob } from './qualifications.ts';

export interface Job {
	name: string;
	/** node-cron expression (5 or 6 fields) */
	schedule: string;
	run(): Promise<unknown>;
}

export const JOBS: Job[] = [
	{ name: 'ingest-inbox', schedule: config.ingestCron, run: () => runInbox() },
	{ name: 'fleet-matching', schedule: process.env.LOCKSTEP_FLEET_CRON ?? '7 * * * *', run: () => runFleetJob() },
	// digests at each subscriber's time in their zone, and grouped alarm mails
	{ name: 'mail-schedule', schedule: '* * * * *', run: () => runMailSchedule() },
	// the outbox, every 10 s (six-field cron: seconds first); starts the local sink where it is used
	{ name: 'mail-outbox', schedule: '*/10 * * * * *', run: () => runOutbox() },
	// campaign drafts and rescores left by a stopped process, and requalification proposals (drafts only)
	{ name: 'qualifications', schedule: process.env.LOCKSTEP_QUALIFICATION_CRON ?? '* * * * *', run: () => runQualificationJob() }
];
