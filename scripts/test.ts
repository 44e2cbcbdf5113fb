/**
 * `npm test`: every suite, in order — unit and integration (vitest), then a production build and the
 * HTTP and browser tests against it (vitest with tests/e2e/vitest.config.ts). Ends with one plain line
 * `N passed, N failed` so that a run with no test in it is visible.
 */
import { spawnSync } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';

interface Counts {
	passed: number;
	failed: number;
	skipped: number;
}

const tmp = fs.mkdtempSync(path.join(os.tmpdir(), 'lockstep-test-report-'));
const bin = (name: string) => path.join('node_modules', '.bin', name);

function vitest(label: string, extra: string[]): Counts {
	const out = path.join(tmp, `${label}.json`);
	console.log(`\n── ${label} ──`);
	const r = spawnSync(bin('vitest'), ['run', '--reporter=default', '--reporter=json', `--outputFile.json=${out}`, ...extra], {
		stdio: 'inherit'
	});
	if (!fs.existsSync(out)) {
		console.error(`${label}: vitest produced no report (exit ${r.status})`);
		return { passed: 0, failed: 1, skipped: 0 };
	}
	const j = JSON.parse(fs.readFileSync(out, 'utf8'));
	// Suites that failed to load count as failures even when they hold no test.
	const brokenSuites = (j.testResults ?? []).filter((s: { status: string; assertionResults: unknown[] }) => s.status === 'failed' && s.assertionResults.length === 0).length;
	return { passed: j.numPassedTests, failed: j.numFailedTests + brokenSuites, skipped: j.numPendingTests + (j.numTodoTests ?? 0) };
}

const total: Counts = { passed: 0, failed: 0, skipped: 0 };
const add = (c: Counts) => {
	total.passed += c.passed;
	total.failed += c.failed;
	total.skipped += c.skipped;
};

console.log('\n── type check (svelte-check) ──');
const check = spawnSync(bin('svelte-kit'), ['sync'], { stdio: 'inherit' });
const types = check.status === 0 ? spawnSync(bin('svelte-check'), ['--tsconfig', './tsconfig.json', '--threshold', 'error', '--output', 'human'], { stdio: 'inherit' }) : check;
// One check counted as one test, so a type error fails the run visibly.
if (types.status === 0) total.passed += 1;
else total.failed += 1;

add(vitest('unit-and-integration', []));

console.log('\n── build ──');
const build = spawnSync(bin('vite'), ['build', '--logLevel', 'warn'], { stdio: 'inherit' });
if (build.status !== 0) {
	console.error('build failed');
	total.failed += 1;
} else {
	add(vitest('e2e', ['--config', 'tests/e2e/vitest.config.ts']));
}

fs.rmSync(tmp, { recursive: true, force: true });
console.log(`\n${total.passed} passed, ${total.failed} failed${total.skipped ? `, ${total.skipped} skipped` : ''}`);
process.exit(total.failed > 0 || total.passed === 0 ? 1 : 0);
