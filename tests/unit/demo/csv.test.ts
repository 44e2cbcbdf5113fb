import { execFileSync } from 'node:child_process';
import { mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import Papa from 'papaparse';
import { afterAll, describe, expect, it } from 'vitest';
import {
	buildScenario,
	generateWaferSteps,
	formatValue,
	REQUIRED_COLUMNS,
	writeWaferSummaryCsv,
	writeWaferSummaryCsvFile
} from '../../../seeds/demo/index';
import { demo } from './fixture';

const { scenario, rows } = demo();
const day = rows.filter((r) => r.processedAt.getTime() < scenario.start.getTime() + 86_400_000);
const tmp = mkdtempSync(join(tmpdir(), 'lockstep-demo-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

describe('demo wafer-summary CSV', () => {
	it('formats a value exactly as String(Number(v.toPrecision(6))) would (ECMA-262 toPrecision)', () => {
		const ref = (v: number) => String(Number(v.toPrecision(6)));
		// Edges: decades, exact ties (the larger digits win), rounding into the next decade, signs, tiny and huge.
		const edges = [1, 9.999995, 9.9999949, 10, 12.5, 99999.95, 99999.949, 100000, 123456.5, 999999.4, 999999.5, 0, 0.5, 1e-7, 2.5e7, 1e21];
		for (const v of [...edges, ...edges.map((x) => -x)]) expect(formatValue(v), String(v)).toBe(ref(v));
		// A seeded sweep over the demo's magnitudes (xorshift32, Marsaglia 2003): about 200,000 values.
		let x = 2463534242;
		const next = () => ((x ^= x << 13), (x ^= x >>> 17), (x ^= x << 5), (x >>> 0) / 4294967296);
		let differ = 0;
		for (let i = 0; i < 200_000; i++) {
			const v = (next() - 0.2) * 10 ** (next() * 9 - 2);
			if (formatValue(v) !== ref(v)) differ++;
		}
		expect(differ).toBe(0);
		expect(() => formatValue(Number.NaN)).toThrow(RangeError);
	});

	it('starts with the required columns, then one column per feature of the step', () => {
		const text = writeWaferSummaryCsv(day, scenario, 'OXV-22', 'main_etch');
		const header = text.slice(0, text.indexOf('\n')).split(',');
		expect(header.slice(0, 6)).toEqual([
			'wafer_id',
			'lot_id',
			'chamber_id',
			'recipe',
			'step',
			'processed_at'
		]);
		expect(REQUIRED_COLUMNS).toEqual(header.slice(0, 6));
		expect(header.slice(6)).toEqual(scenario.features['OXV-22'].main_etch.map((f) => f.name));
		expect(header).toContain('oes_777.4');
		expect(new Set(header).size).toBe(header.length);
	});

	it('round-trips through papaparse: ids, UTC timestamps with Z and values to 6 significant digits', () => {
		for (const [recipe, step] of [
			['OXV-22', 'main_etch'],
			['PGE-14', 'breakthrough'],
			['PRS-60', 'over_strip']
		]) {
			const mine = day.filter((r) => r.recipe === recipe && r.step === step);
			const text = writeWaferSummaryCsv(day, scenario, recipe, step);
			const parsed = Papa.parse<Record<string, string | number>>(text, {
				header: true,
				// Only features are numbers (papaparse would also turn ISO timestamps into Dates).
				dynamicTyping: (f) => !(REQUIRED_COLUMNS as readonly (string | number)[]).includes(f),
				skipEmptyLines: true
			});
			expect(parsed.errors).toEqual([]);
			expect(parsed.data.length).toBe(mine.length);
			const names = scenario.features[recipe][step].map((f) => f.name);
			parsed.data.forEach((p, k) => {
				const r = mine[k];
				expect(p.wafer_id).toBe(r.waferId);
				expect(p.lot_id).toBe(r.lotId);
				expect(p.chamber_id).toBe(r.chamberCode);
				expect(p.recipe).toBe(recipe);
				expect(p.step).toBe(step);
				expect(p.processed_at).toMatch(/^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ$/);
				expect(new Date(p.processed_at as string).getTime()).toBe(r.processedAt.getTime());
				names.forEach((n, j) => {
					expect(typeof p[n]).toBe('number');
					const v = r.values[j];
					expect(Math.abs((p[n] as number) - v)).toBeLessThanOrEqual(Math.abs(v) * 5e-6 + 1e-12);
				});
			});
		}
	});

	it('keeps only the asked recipe step and refuses a mismatched row or an unknown step', () => {
		const text = writeWaferSummaryCsv(day, scenario, 'PGE-14', 'main_etch');
		const lines = text.trimEnd().split('\n');
		expect(lines.length - 1).toBe(day.filter((r) => r.recipe === 'PGE-14' && r.step === 'main_etch').length);
		expect(lines.slice(1).every((l) => l.split(',')[4] === 'main_etch' && l.split(',')[3] === 'PGE-14')).toBe(
			true
		);
		const bad = {
			...day.find((r) => r.recipe === 'PGE-14' && r.step === 'main_etch')!,
			values: new Float64Array(3)
		};
		expect(() => writeWaferSummaryCsv([bad], scenario, 'PGE-14', 'main_etch')).toThrow(/3 values/);
		expect(() => writeWaferSummaryCsv(day, scenario, 'PGE-14', 'no_such_step')).toThrow(/no recipe step/);
		const nan = { ...bad, values: Float64Array.from(scenario.features['PGE-14'].main_etch, () => NaN) };
		expect(() => writeWaferSummaryCsv([nan], scenario, 'PGE-14', 'main_etch')).toThrow(/non-finite/);
	});

	it('writes the same text to a file with the streaming variant', async () => {
		const path = join(tmp, 'one.csv');
		const n = await writeWaferSummaryCsvFile(day, scenario, 'PRS-60', 'bulk_strip', path);
		expect(readFileSync(path, 'utf8')).toBe(writeWaferSummaryCsv(day, scenario, 'PRS-60', 'bulk_strip'));
		expect(n).toBe(day.filter((r) => r.step === 'bulk_strip').length);
	});

	it('export CLI writes daily files per recipe step plus episodes, maintenance and golden JSON', () => {
		const out = join(tmp, 'export');
		const end = '2026-06-01T06:00:00Z';
		const log = execFileSync(
			process.execPath,
			['--import', 'tsx', 'seeds/demo/export.ts', out, '--days', '20', '--end', end, '--volume-days', '0'],
			{
				encoding: 'utf8'
			}
		);
		expect(log).toMatch(/wafer-steps/);
		const files = readdirSync(out).sort();
		for (const f of ['episodes.json', 'maintenance.json', 'golden.json', 'scenario.json'])
			expect(files).toContain(f);
		const csvs = files.filter((f) => f.endsWith('.csv'));
		expect(csvs.every((f) => /^\d{4}-\d\d-\d\d_[A-Z]+-\d+_[a-z_]+\.csv$/.test(f))).toBe(true);
		expect(files.some((f) => f.endsWith('.part'))).toBe(false);
		const sc = buildScenario({ days: 20, end: new Date(end), realVolumeDays: 0 });
		const expected = [...generateWaferSteps(sc)];
		let lines = 0;
		for (const f of csvs) {
			const text = readFileSync(join(out, f), 'utf8').trimEnd().split('\n');
			const [date, recipe, ...step] = f.replace(/\.csv$/, '').split('_');
			expect(text[0].split(',').slice(6)).toEqual(sc.features[recipe][step.join('_')].map((x) => x.name));
			expect(text.slice(1).every((l) => l.split(',')[5].startsWith(date))).toBe(true);
			lines += text.length - 1;
		}
		expect(lines).toBe(expected.length);
		const golden = JSON.parse(readFileSync(join(out, 'golden.json'), 'utf8'));
		expect(golden.length).toBe(expected.filter((r) => r.golden).length);
		expect(golden[0]).toEqual(
			expect.objectContaining({ waferId: expect.any(String), chamberCode: expect.any(String) })
		);
		const episodes = JSON.parse(readFileSync(join(out, 'episodes.json'), 'utf8'));
		expect(episodes.map((e: { id: string }) => e.id)).toEqual(sc.episodes.map((e) => e.id));
		const maintenance = JSON.parse(readFileSync(join(out, 'maintenance.json'), 'utf8'));
		expect(maintenance.length).toBe(sc.maintenance.length);
		expect(new Date(maintenance[0].at).getTime()).toBe(sc.maintenance[0].at.getTime());
	});

	it('export CLI refuses a bad argument with a clear message', () => {
		expect(() =>
			execFileSync(
				process.execPath,
				['--import', 'tsx', 'seeds/demo/export.ts', join(tmp, 'x'), '--days', 'many'],
				{ stdio: 'pipe' }
			)
		).toThrow(/--days must be an integer/);
	});
});
