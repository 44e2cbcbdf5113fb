/** The jobs lower their own scheduling priority (jobs/priority.ts), checked in a child process. */
import { spawnSync } from 'node:child_process';
import os from 'node:os';
import { describe, expect, it } from 'vitest';

function niceOfChild(env: Record<string, string>): number {
	const code = `import { yieldToWebServer } from './jobs/priority.ts'; import os from 'node:os'; yieldToWebServer(); console.log(os.getPriority());`;
	const r = spawnSync(process.execPath, ['--import', 'tsx', '--input-type=module', '-e', code], { env: { ...process.env, ...env }, encoding: 'utf8' });
	if (r.status !== 0) throw new Error(r.stderr);
	return Number(r.stdout.trim().split('\n').pop());
}

describe('jobs priority', () => {
	it('a job process runs at niceness 10 by default, at LOCKSTEP_JOBS_NICE when set, unchanged with 0', () => {
		const mine = os.getPriority();
		expect(niceOfChild({ LOCKSTEP_JOBS_NICE: '' })).toBe(Math.max(mine, 10));
		expect(niceOfChild({ LOCKSTEP_JOBS_NICE: '15' })).toBe(Math.max(mine, 15));
		expect(niceOfChild({ LOCKSTEP_JOBS_NICE: '0' })).toBe(mine);
	});
});
