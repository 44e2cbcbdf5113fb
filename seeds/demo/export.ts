/**
 * Write the demo fab to files, as the tool hosts would deliver it:
 *
 *   node --import tsx seeds/demo/export.ts OUTDIR [--seed N] [--end ISO] [--days N] [--volume-days N]
 *
 * OUTDIR gets one wafer-summary CSV per UTC day and recipe step (`YYYY-MM-DD_<recipe>_<step>.csv`,
 * so name order is time order), plus `scenario.json` (fab, areas, tools, chambers, recipes, features,
 * people), `episodes.json`, `maintenance.json` and `golden.json` (wafer-step keys). Each file is
 * written to a temporary name and renamed when complete, so a crash leaves no half file.
 */
import { mkdirSync, renameSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { parseArgs } from 'node:util';
import { csvHeader, csvLine, isoSeconds } from './csv';
import { generateWaferSteps } from './generate';
import { buildScenario } from './scenario';
import type { DemoScenario } from './types';

export interface ExportSummary {
	files: string[];
	waferSteps: number;
	golden: number;
	ms: number;
}

/** Export the scenario's wafer-steps and JSON side files into `outDir` (created if missing). */
export function exportDemo(scenario: DemoScenario, outDir: string): ExportSummary {
	const t0 = performance.now();
	mkdirSync(outDir, { recursive: true });
	const files: string[] = [];
	const atomicWrite = (name: string, text: string) => {
		const path = join(outDir, name);
		writeFileSync(`${path}.part`, text, 'utf8');
		renameSync(`${path}.part`, path);
		files.push(name);
	};
	let day = '';
	let open = new Map<string, string[]>();
	const flush = () => {
		for (const [name, lines] of [...open].sort()) atomicWrite(name, lines.join('\n') + '\n');
		open = new Map();
	};
	const golden: { waferId: string; chamberCode: string; recipe: string; step: string }[] = [];
	let waferSteps = 0;
	for (const row of generateWaferSteps(scenario)) {
		const d = isoSeconds(row.processedAt).slice(0, 10);
		if (d !== day) {
			flush();
			day = d;
		}
		const name = `${d}_${row.recipe}_${row.step}.csv`;
		let lines = open.get(name);
		if (!lines) open.set(name, (lines = [csvHeader(scenario, row.recipe, row.step)]));
		lines.push(csvLine(row));
		waferSteps++;
		if (row.golden)
			golden.push({ waferId: row.waferId, chamberCode: row.chamberCode, recipe: row.recipe, step: row.step });
	}
	flush();
	const { maintenance, episodes, ...rest } = scenario;
	atomicWrite('scenario.json', JSON.stringify(rest, null, 2) + '\n');
	atomicWrite('episodes.json', JSON.stringify(episodes, null, 2) + '\n');
	atomicWrite('maintenance.json', JSON.stringify(maintenance, null, 2) + '\n');
	atomicWrite('golden.json', JSON.stringify(golden) + '\n');
	return { files, waferSteps, golden: golden.length, ms: performance.now() - t0 };
}

function main(argv: string[]) {
	const { values, positionals } = parseArgs({
		args: argv,
		allowPositionals: true,
		options: {
			seed: { type: 'string' },
			end: { type: 'string' },
			days: { type: 'string' },
			'volume-days': { type: 'string' }
		}
	});
	if (positionals.length !== 1) {
		console.error(
			'usage: node --import tsx seeds/demo/export.ts OUTDIR [--seed N] [--end ISO-8601] [--days N] [--volume-days N]'
		);
		process.exit(2);
	}
	const num = (v: string | undefined, what: string) => {
		if (v === undefined) return undefined;
		const n = Number(v);
		if (!Number.isInteger(n)) throw new RangeError(`--${what} must be an integer, got "${v}"`);
		return n;
	};
	const end = values.end === undefined ? undefined : new Date(values.end);
	if (end && Number.isNaN(end.getTime())) throw new RangeError(`--end is not a date: "${values.end}"`);
	const scenario = buildScenario({
		seed: num(values.seed, 'seed'),
		end,
		days: num(values.days, 'days'),
		realVolumeDays: num(values['volume-days'], 'volume-days')
	});
	const s = exportDemo(scenario, positionals[0]);
	const csvs = s.files.filter((f) => f.endsWith('.csv')).length;
	console.log(
		`demo fab ${scenario.fab.name}: ${s.waferSteps} wafer-steps (${s.golden} golden) in ${csvs} CSV files + 4 JSON files, ` +
			`${scenario.start.toISOString()} – ${scenario.end.toISOString()}, ${(s.ms / 1000).toFixed(1)} s → ${positionals[0]}`
	);
}

if (import.meta.url === `file://${process.argv[1]}`) {
	try {
		main(process.argv.slice(2));
	} catch (e) {
		console.error(`demo export failed: ${(e as Error).message}`);
		process.exit(1);
	}
}
