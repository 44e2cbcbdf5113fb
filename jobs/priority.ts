/**
 * Background work yields the CPU to people. The jobs (ingest and scoring of large files, fleet
 * matching, mail) run at a lower scheduling priority than the web server, so that an engineer's
 * screen answers promptly while a 60,000-row file is scored; the job takes a little longer instead.
 * On Linux a niceness of 10 gives a busy job about a tenth of the CPU share of a busy server process
 * (the kernel's CFS weights 1024 vs 110 — Linux kernel sched/core.c `sched_prio_to_weight`, from
 * memory) and all of the CPU the server leaves idle.
 *
 * LOCKSTEP_JOBS_NICE sets the niceness (0–19, default 10; 0 leaves the priority alone). Lowering a
 * priority needs no privilege; a failure is reported and the job runs on at its current priority.
 */
import os from 'node:os';
import { config } from '../src/lib/server/config.ts';

export function yieldToWebServer(nice: number = config.jobsNice, log: (s: string) => void = console.warn): void {
	if (nice <= 0) return;
	try {
		if (os.getPriority() < nice) os.setPriority(nice);
	} catch (e) {
		log(`jobs: could not lower the priority to niceness ${nice}: ${(e as Error).message}`);
	}
}
