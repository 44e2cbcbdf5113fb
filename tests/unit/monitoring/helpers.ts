import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import normal from '@stdlib/random-base-normal';

export const FIXTURES = fileURLToPath(new URL('../../fixtures/', import.meta.url));

/** Whitespace-separated numbers, one row a line. */
export function readDat(name: string): number[][] {
	return readFileSync(FIXTURES + name, 'utf8')
		.trim()
		.split('\n')
		.map((l) => l.trim().split(/\s+/).map(Number));
}

export function transpose(a: number[][]): number[][] {
	return a[0].map((_, j) => a.map((r) => r[j]));
}

/** A plain CSV (no quoted fields) as header + records. */
export function readCsv(name: string): { header: string[]; records: Record<string, string>[] } {
	const [h, ...lines] = readFileSync(FIXTURES + name, 'utf8').trim().split('\n');
	const header = h.split(',');
	return {
		header,
		records: lines.map((l) => Object.fromEntries(l.split(',').map((v, i) => [header[i], v])))
	};
}

/** Seeded standard normal draws (MT19937 inside @stdlib/random-base-normal). */
export function seededNormal(seed: number): () => number {
	return normal.factory(0, 1, { seed });
}
