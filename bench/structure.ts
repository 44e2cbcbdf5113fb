/**
 * Onboarding a fab's structure (issue 12 item 1): registering a 200-chamber fab (50 tools in 4 areas,
 * created on the way) as `POST /api/chambers` does it — one request of 200 chambers — and a 2,000-chamber
 * request (the limit of one request); then a tool host's first file naming 20 chambers the fab lacks,
 * ingested with the register scope (each chamber registered into UNASSIGNED), through the real pipeline
 * into a temporary SQLite file. Prints milliseconds for each (no target in the issue; the 20-request
 * budget of issue 12 counts the registration as one request).
 *
 * Run alone: node --import tsx bench/structure.ts   (bench/run.ts calls runStructureBench()).
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { closeDb, migrateLatest, openDb, setDb } from '../src/lib/server/db.ts';
import { parseRegistration, registerChambers } from '../src/lib/server/chamber-registration.ts';
import { ingestFile } from '../src/lib/server/ingest/index.ts';
import type { BenchFigure } from './figure.ts';

function fab(n: number, prefix: string) {
	return Array.from({ length: n }, (_, i) => {
		const t = Math.floor(i / 4);
		const tool = `${prefix}${String(t).padStart(3, '0')}`;
		return { code: `${tool}-${'ABCD'[i % 4]}`, tool, area: `${prefix}A${Math.floor((t * 4 * 4) / n)}` };
	});
}

async function timed(f: () => Promise<unknown>): Promise<number> {
	const t0 = performance.now();
	await f();
	return performance.now() - t0;
}

export async function runStructureBench(): Promise<BenchFigure[]> {
	const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'lockstep-bench-structure-'));
	const k = openDb({ client: 'better-sqlite3', filename: path.join(dir, 'bench.sqlite'), connectionString: null });
	setDb(k);
	try {
		await migrateLatest(k);
		const register = async (items: ReturnType<typeof fab>) => {
			const parsed = parseRegistration({ chambers: items });
			if (!parsed.ok) throw new Error(JSON.stringify(parsed.errors));
			const r = await registerChambers(parsed.items, k);
			if (!r.ok) throw new Error(JSON.stringify(r.errors));
		};
		const ms200 = await timed(() => register(fab(200, 'S')));
		const ms2000 = await timed(() => register(fab(2000, 'L')));
		const header = 'wafer_id,lot_id,chamber_id,recipe,step,processed_at,oes_750.4,oes_777.4,pressure_mtorr';
		const rows = Array.from({ length: 20 }, (_, i) => `N${i},LN,NEW${String(i).padStart(2, '0')}-A,NEW-ETCH,main,2026-11-02T06:${String(i).padStart(2, '0')}:00Z,1200,800,15`);
		const file = path.join(dir, 'first.csv');
		fs.writeFileSync(file, [header, ...rows].join('\n') + '\n');
		let registered = 0;
		const msIngest = await timed(async () => {
			const r = await ingestFile(file, { source: 'api', registerUnknownChambers: true, k });
			registered = r.created.chambers.length;
		});
		if (registered !== 20) throw new Error(`expected 20 chambers registered, got ${registered}`);
		return [
			{ name: 'register a 200-chamber fab in one request (50 tools, 4 areas created)', value: ms200, unit: 'ms' },
			{ name: 'register 2,000 chambers in one request (the per-request limit)', value: ms2000, unit: 'ms' },
			{ name: 'first file of 20 unknown chambers, ingested with register', value: msIngest, unit: 'ms' }
		];
	} finally {
		await closeDb();
		fs.rmSync(dir, { recursive: true, force: true });
	}
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
	for (const f of await runStructureBench()) console.log(`${f.name}: ${f.value.toFixed(0)} ${f.unit}`);
}
