/**
 * The fleet-matching job: every recipe step's chambers against its active fleet model, storing the
 * result and opening (or extending) `fleet` alarms. Hourly by default (LOCKSTEP_FLEET_CRON).
 */
import { runFleetMatchingAll } from '../src/lib/server/fleet-matching.ts';

export async function runFleetJob(): Promise<void> {
	const results = await runFleetMatchingAll();
	const flagged = results.flatMap((r) => r.flagged);
	const opened = results.reduce((n, r) => n + r.alarmsOpened.length, 0);
	console.log(`jobs: fleet matching over ${results.length} recipe steps; ${flagged.length} chamber-steps apart (${flagged.join(', ') || 'none'}); ${opened} alarms opened`);
}
