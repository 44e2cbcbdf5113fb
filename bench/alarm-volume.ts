/**
 * False alarms at a real fab's volume, end to end: a generated in-control fleet (tests/helpers/
 * volume-fab.ts) on an empty SQLite database, scored hour by hour through the real pipeline, then a
 * fault on a chamber whose alarms were acknowledged as false alarms.
 *
 *   node --import tsx bench/alarm-volume.ts [--chambers 6] [--hours 96] [--per-hour 20] [--seed 1] [--runs 1]
 *
 * Prints the alarms opened per rule, the false alarms per 10,000 wafer-steps against the policy's
 * budget, and the wafers from the fault's onset to a new alarm. Uses only APIs that predate the alarm
 * episodes, so the same script measures the rules before and after (see the monitoring README).
 */
import { execFileSync } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { closeDb, migrateLatest, openDb, setDb } from '../src/lib/server/db.ts';
import { getSetting } from '../src/lib/server/settings.ts';
import { createUser } from '../src/lib/server/users.ts';
import { alarmCounts, buildVolumeFab, faultAfterFalseAlarm, runHours } from '../tests/helpers/volume-fab.ts';

function arg(name: string, dflt: number): number {
	const i = process.argv.indexOf(`--${name}`);
	return i > 0 ? Number(process.argv[i + 1]) : dflt;
}

async function once(seed: number, o: { chambers: number; hours: number; perHour: number }) {
	const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'lockstep-volume-'));
	const k = openDb({ client: 'better-sqlite3', filename: path.join(dir, 'v.sqlite'), connectionString: null });
	try {
		await migrateLatest(k);
		setDb(k);
		const a = (await createUser({ username: 'va', displayName: 'Volume A', password: 'volume-pass-a', role: 'engineer' })).id;
		const b = (await createUser({ username: 'vb', displayName: 'Volume B', password: 'volume-pass-b', role: 'engineer' })).id;
		const t0 = performance.now();
		const fab = await buildVolumeFab(k, { chambers: o.chambers, steps: [12, 40], wafersPerHour: o.perHour, hours: o.hours, golden: 100, seed }, [a, b]);
		const judged = await runHours(k, fab, o.hours, o.perHour);
		const counts = await alarmCounts(k);
		// Under the old rules one live alarm per chamber × step × rule absorbed every later violation, so
		// the alarms opened saturate; the wafer-steps the rules flagged say how often they fired.
		const flagged = Number((await k('alarms').sum({ n: 'wafer_count' }).first())?.n ?? 0);
		const total = Object.values(counts).reduce((x, y) => x + y, 0);
		const policy = (await getSetting('alarm_policy', k)) as { falseAlarmsPer10k?: number };
		const fault = await faultAfterFalseAlarm(k, fab, { chamberId: fab.chamberIds[0], stepId: fab.stepIds[1], userId: a, shift: 0.5, maxWafers: 60, wafersPerHour: o.perHour });
		return { judged, counts, total, flagged, budget: policy.falseAlarmsPer10k ?? null, fault, seconds: (performance.now() - t0) / 1000 };
	} finally {
		await closeDb();
		fs.rmSync(dir, { recursive: true, force: true });
	}
}

async function main() {
	const o = { chambers: arg('chambers', 6), hours: arg('hours', 96), perHour: arg('per-hour', 20) };
	const runs = arg('runs', 1);
	const seed = arg('seed', 1);
	let judged = 0;
	let total = 0;
	let flagged = 0;
	const byRule: Record<string, number> = {};
	const faults: (number | null)[] = [];
	if (process.argv.includes('--json')) {
		console.log(JSON.stringify(await once(seed, o)));
		return;
	}
	for (let r = 0; r < runs; r++) {
		// Each run in its own process: the server modules cache models by baseline id, and every run's
		// fresh database numbers its baselines from 1 again.
		const out = execFileSync(
			process.execPath,
			['--import', 'tsx', process.argv[1], '--json', '--seed', String(seed + 1000 * r), '--chambers', String(o.chambers), '--hours', String(o.hours), '--per-hour', String(o.perHour)],
			{ encoding: 'utf8', maxBuffer: 1 << 26 }
		);
		const x = JSON.parse(out.trim().split('\n').pop()!) as Awaited<ReturnType<typeof once>>;
		judged += x.judged;
		total += x.total;
		flagged += x.flagged;
		for (const [rule, n] of Object.entries(x.counts)) byRule[rule] = (byRule[rule] ?? 0) + n;
		faults.push(x.fault.wafers);
		console.log(
			`run ${r + 1}: ${x.judged.toLocaleString('en')} in-control wafer-steps (${o.chambers} chambers × 2 steps × ${o.hours} h × ${o.perHour}/h), alarms ${x.total} ${JSON.stringify(x.counts)}, ` +
				`budget ${x.budget ?? 'none (old policy)'} per 10,000; fault (3 features +0.5) → new alarm after ${x.fault.wafers ?? 'none within 60'} wafers ` +
				`(opened: ${JSON.stringify(x.fault.openedAfter)}; acknowledged as FA-LIMIT first: ${x.fault.acknowledged.length}, live at onset: ${x.fault.liveRulesAtOnset.join('+') || 'none'}; fault worst ratios ${x.fault.ratios.slice(0, 5).map((v) => v.toFixed(2)).join(', ')}…) in ${x.seconds.toFixed(0)} s`
		);
	}
	console.log(`\nall runs: ${total} alarms on ${judged.toLocaleString('en')} in-control wafer-steps = ${((total / judged) * 10_000).toFixed(2)} per 10,000 ${JSON.stringify(byRule)}`);
	console.log(`wafer-steps flagged by a rule (alarm wafer counts): ${flagged} = ${((flagged / judged) * 10_000).toFixed(1)} per 10,000`);
	console.log(`fault → new alarm (wafers after onset): ${faults.map((f) => f ?? 'none').join(', ')}`);
}

main().catch((e) => {
	console.error(e);
	process.exitCode = 1;
});
