/** Shared set-up for the ingest tests: a small fab and generated wafer-summary files. */
import fs from 'node:fs';
import path from 'node:path';
import type { Knex } from 'knex';

/** Channels at the actinometry lines (NIST ASD air wavelengths, see src/lib/monitoring/emission-lines.ts) plus two others. */
export const OES_NM = [337.1, 656.3, 703.7, 750.4, 777.4, 844.6];
export const SENSORS = ['rf_forward_w', 'rf_reflected_w', 'pressure_mtorr', 'throttle_valve_pos'];
export const HEADER = ['wafer_id', 'lot_id', 'chamber_id', 'recipe', 'step', 'processed_at', 'rf_on_s', ...OES_NM.map((w) => `oes_${w}`), ...SENSORS];

export async function addChambers(k: Knex, codes: string[]): Promise<Map<string, number>> {
	const [a] = await k('areas').insert({ code: 'ETCH', name: 'Etch' }).returning('id');
	const [t] = await k('tools').insert({ code: 'ET-01', name: 'Etch 1', area_id: a.id ?? a }).returning('id');
	const out = new Map<string, number>();
	for (const code of codes) {
		const [c] = await k('chambers').insert({ code, name: code, tool_id: t.id ?? t, created_at: Date.now() }).returning('id');
		out.set(code, Number(c.id ?? c));
	}
	return out;
}

/** Deterministic plausible values for wafer i (no randomness: tests compare stored vectors to these). */
export function values(i: number): number[] {
	const oes = OES_NM.map((w, j) => Math.round((1000 + 37 * j + ((i * 7 + j * 13) % 50)) * 100) / 100);
	const sensors = [500 + (i % 5), 2 + (i % 3) / 10, 15 + (i % 4) / 100, 40 + (i % 9)];
	return [...oes, ...sensors];
}

export interface RowSpec {
	wafer: string;
	lot?: string;
	chamber?: string;
	recipe?: string;
	step?: string;
	at?: string;
	rfOn?: string;
	values?: Array<number | string>;
}

export function row(i: number, spec: Partial<RowSpec> = {}): string[] {
	const at = spec.at ?? new Date(Date.UTC(2026, 10, 1, 6, 0, 0) + i * 120_000).toISOString();
	return [
		spec.wafer ?? `W${String(i).padStart(5, '0')}`,
		spec.lot ?? `L${Math.floor(i / 25)}`,
		spec.chamber ?? 'PM1',
		spec.recipe ?? 'OX-ETCH',
		spec.step ?? 'main',
		at,
		spec.rfOn ?? '42.5',
		...(spec.values ?? values(i)).map(String)
	];
}

export function csv(header: string[], rows: string[][], eol = '\n'): string {
	return [header.join(','), ...rows.map((r) => r.join(','))].join(eol) + eol;
}

export function rows(n: number, from = 0, spec: Partial<RowSpec> = {}): string[][] {
	return Array.from({ length: n }, (_, j) => row(from + j, spec));
}

export function write(dir: string, name: string, content: string | Buffer): string {
	const p = path.join(dir, name);
	fs.writeFileSync(p, content);
	return p;
}

export async function count(k: Knex, table: string): Promise<number> {
	return Number((await k(table).count({ n: '*' }).first())?.n ?? 0);
}
