/**
 * `npm run bench`: every performance figure Lockstep promises, in one table, each with its target and,
 * where python3 with numpy is present, the same work done by numpy. Bench modules are optional so a
 * partly built tree still runs: each exports `run…Bench(): Promise<BenchRow[]>`.
 */
import os from 'node:os';

export interface BenchRow {
	name: string;
	value: number;
	unit: string;
	target?: string;
	numpy?: number;
}

const SUITES: [string, string, string][] = [
	['engine', './engine.ts', 'runEngineBench'],
	['ingest', './ingest.ts', 'runIngestBench'],
	['heatmap', './heatmap.ts', 'runHeatmapBench'],
	['wafer', './wafer.ts', 'runWaferBench'],
	['structure', './structure.ts', 'runStructureBench'],
	['onboarding', './onboarding.ts', 'runOnboardingBench'],
	['fleet', './fleet.ts', 'runFleetBench']
];

function fmt(v: number): string {
	if (!Number.isFinite(v)) return String(v);
	if (Math.abs(v) >= 1000) return Math.round(v).toLocaleString('en');
	if (Math.abs(v) >= 10) return v.toFixed(1);
	return v.toPrecision(3);
}

async function main() {
	const only = process.argv.slice(2);
	const rows: (BenchRow & { suite: string })[] = [];
	const t0 = performance.now();
	for (const [suite, file, fn] of SUITES) {
		if (only.length && !only.includes(suite)) continue;
		let mod: Record<string, unknown>;
		try {
			mod = await import(file);
		} catch (e) {
			console.log(`(${suite}: no bench module yet — ${(e as Error).message.split('\n')[0]})`);
			continue;
		}
		const run = mod[fn] as (() => Promise<BenchRow[]>) | undefined;
		if (typeof run !== 'function') continue;
		console.log(`▸ ${suite} …`);
		for (const r of await run()) rows.push({ ...r, suite });
	}
	const cpu = os.cpus()[0]?.model ?? 'unknown CPU';
	console.log(`\nLockstep bench — ${new Date().toISOString().slice(0, 10)}, ${os.cpus().length} × ${cpu}, Node ${process.version}`);
	console.log('| suite | figure | value | unit | target | numpy | Lockstep ÷ numpy |');
	console.log('|---|---|---|---|---|---|---|');
	for (const r of rows) {
		const ratio = r.numpy !== undefined && r.numpy !== 0 ? fmt(r.value / r.numpy) : '';
		console.log(`| ${r.suite} | ${r.name} | ${fmt(r.value)} | ${r.unit} | ${r.target ?? ''} | ${r.numpy !== undefined ? fmt(r.numpy) : ''} | ${ratio} |`);
	}
	console.log(`\n(${((performance.now() - t0) / 1000).toFixed(0)} s)`);
}

main().catch((e) => {
	console.error(e);
	process.exitCode = 1;
});
