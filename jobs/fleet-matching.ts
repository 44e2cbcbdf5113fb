/**
 * The fleet-matching job: every recipe step's chambers against each other (monitoring/fleet.ts),
 * rebuilding a step's fleet model first when its approved chamber baselines changed, storing each
 * run or the reason it was skipped, and raising (or extending) `fleet` alarms. Hourly by default
 * (LOCKSTEP_FLEET_CRON).
 */
import { runFleetMatchingAll } from '../src/lib/server/fleet-matching.ts';

export async function runFleetJob(): Promise<void> {
	const results = await runFleetMatchingAll(undefined, undefined, { trigger: 'schedule' });
	const flagged = results.flatMap((r) => r.flagged);
	const opened = results.reduce((n, r) => n + r.alarmsOpened.length, 0);
	const skipped = results.filter((r) => r.skipped).length;
	const rebuilt = results.filter((r) => r.rebuilt).length;
	console.log(
		`jobs: fleet matching over ${results.length} recipe steps (${skipped} skipped, ${rebuilt} fleet models rebuilt); ${flagged.length} chamber-steps apart (${flagged.join(', ') || 'none'}); ${opened} alarms opened`
	);
}
