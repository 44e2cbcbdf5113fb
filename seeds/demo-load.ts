/**
 * How one day of demo wafer-steps enters Lockstep: as the tool hosts would deliver it — one
 * wafer-summary CSV per recipe step — through the ingest pipeline (validation, catalog, storage,
 * scoring on arrival, rollups, alarms). Golden status is not part of the file format: it is set
 * afterwards, as an engineer qualifying wafers would.
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import type { Knex } from 'knex';
import { writeWaferSummaryCsvFile, type DemoScenario, type DemoWaferStep } from './demo/index.ts';
import { ingestFile } from '../src/lib/server/ingest/index.ts';
import { setGolden } from '../src/lib/server/wafer-steps.ts';

export interface DayLoad {
	waferSteps: number;
	rejected: number;
	files: number;
	/** Wall-clock time spent writing the files, ingesting them (with scoring) and marking golden wafers. */
	ms: { csv: number; ingest: number; golden: number };
}

let spool: string | null = null;
function spoolDir(): string {
	// In memory where the machine has a RAM disk: the real-volume demo writes ≈ 200 MB of CSV.
	const base = fs.existsSync('/dev/shm') && fs.statSync('/dev/shm').isDirectory() ? '/dev/shm' : os.tmpdir();
	spool ??= fs.mkdtempSync(path.join(base, 'lockstep-demo-'));
	return spool;
}

export function removeSpool(): void {
	if (spool) fs.rmSync(spool, { recursive: true, force: true });
	spool = null;
}

export async function loadDemoDay(k: Knex, s: DemoScenario, rows: DemoWaferStep[], dayLabel: string, submittedBy: string | null): Promise<DayLoad> {
	const out: DayLoad = { waferSteps: 0, rejected: 0, files: 0, ms: { csv: 0, ingest: 0, golden: 0 } };
	if (rows.length === 0) return out;
	const groups = new Map<string, DemoWaferStep[]>();
	for (const r of rows) {
		const key = `${r.recipe}\u0000${r.step}`;
		const g = groups.get(key);
		if (g) g.push(r);
		else groups.set(key, [r]);
	}
	for (const [key, g] of groups) {
		const [recipe, step] = key.split('\u0000');
		const name = `${dayLabel}_${recipe}_${step}.csv`;
		const file = path.join(spoolDir(), name);
		const t0 = performance.now();
		await writeWaferSummaryCsvFile(g, s, recipe, step, file);
		const t1 = performance.now();
		const report = await ingestFile(file, { source: 'seed', originalName: name, submittedBy, k });
		fs.rmSync(file, { force: true });
		const t2 = performance.now();
		out.ms.csv += t1 - t0;
		out.ms.ingest += t2 - t1;
		if (report.status !== 'done') throw new Error(`demo file ${name} was not accepted: ${JSON.stringify(report).slice(0, 500)}`);
		out.waferSteps += report.rows.accepted;
		out.rejected += report.rows.rejected;
		out.files++;
		const golden = g.filter((r) => r.golden).map((r) => r.waferId);
		if (golden.length) {
			const ids: number[] = [];
			const stepRow = await k('recipe_steps as rs').join('recipes as r', 'r.id', 'rs.recipe_id').where({ 'r.code': recipe, 'rs.name': step }).first('rs.id');
			for (let i = 0; i < golden.length; i += 500)
				ids.push(...(await k('wafer_steps').where({ recipe_step_id: stepRow.id }).whereIn('wafer_id', golden.slice(i, i + 500)).pluck('id')));
			await setGolden(ids, true, k);
		}
		out.ms.golden += performance.now() - t2;
	}
	return out;
}
