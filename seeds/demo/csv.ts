import { createWriteStream } from 'node:fs';
import { once } from 'node:events';
import type { DemoScenario, DemoWaferStep } from './types';

/** Required leading columns of Lockstep's wafer-summary file, in order. */
export const REQUIRED_COLUMNS = [
	'wafer_id',
	'lot_id',
	'chamber_id',
	'recipe',
	'step',
	'processed_at'
] as const;

/** Significant digits printed per feature value: enough to round-trip a 16-bit count or a sensor reading. */
export const SIGNIFICANT_DIGITS = 6;

/** ISO 8601 UTC with `Z`, whole seconds (the demo has no sub-second times). */
export function isoSeconds(d: Date): string {
	return d.toISOString().replace(/\.\d{3}Z$/, 'Z');
}

const POW10 = [1, 10, 100, 1_000, 10_000, 100_000];

/**
 * A value as written: 6 significant digits, no exponent for the demo's ranges, no trailing zeros —
 * the same text as `String(Number(v.toPrecision(6)))`. Own code because the real-volume demo writes
 * about 23 million values and toPrecision plus a second number-to-text conversion was the seed's
 * hottest JavaScript: for |v| in [1, 10⁶) (nearly every demo value) the 6 digits are an integer
 * rounding, printed as an integer with a decimal point put in, about 4× faster; other magnitudes take
 * the toPrecision path. Both pick the larger digit string on an exact tie (ECMA-262
 * Number.prototype.toPrecision, step 10.b); tests/unit/demo/csv.test.ts compares the two.
 */
export function formatValue(v: number): string {
	if (!Number.isFinite(v)) throw new RangeError(`demo: non-finite feature value ${v}`);
	const a = v < 0 ? -v : v;
	if (!(a >= 1 && a < 1e6)) return String(Number(v.toPrecision(SIGNIFICANT_DIGITS)));
	const e = a >= 1e5 ? 5 : a >= 1e4 ? 4 : a >= 1e3 ? 3 : a >= 100 ? 2 : a >= 10 ? 1 : 0;
	let decimals = 5 - e;
	let n = Math.round(a * POW10[decimals]);
	if (n >= 1e6) return String(Number(v.toPrecision(SIGNIFICANT_DIGITS))); // rounded up into the next decade
	while (decimals > 0 && n % 10 === 0) {
		n /= 10;
		decimals--;
	}
	let s = String(n);
	if (decimals > 0) s = `${s.slice(0, s.length - decimals)}.${s.slice(s.length - decimals)}`;
	return v < 0 ? `-${s}` : s;
}

/** The header line (no newline) of a recipe step's file. */
export function csvHeader(scenario: DemoScenario, recipe: string, step: string): string {
	return [...REQUIRED_COLUMNS, ...stepFeatures(scenario, recipe, step).map((f) => f.name)].join(',');
}

/** One data line (no newline). Ids are generated without commas or quotes, so no quoting is needed. */
export function csvLine(row: DemoWaferStep): string {
	const parts = [row.waferId, row.lotId, row.chamberCode, row.recipe, row.step, isoSeconds(row.processedAt)];
	for (let i = 0; i < row.values.length; i++) parts.push(formatValue(row.values[i]));
	return parts.join(',');
}

/**
 * The wafer-summary CSV (issue 4 §1) of one recipe step: header, then one line per wafer-step of
 * `rows` that belongs to that recipe step (rows of other steps are skipped), LF line ends, UTF-8.
 *
 * @throws Error when the scenario has no such recipe step, or a row's values do not match its features
 */
export function writeWaferSummaryCsv(
	rows: Iterable<DemoWaferStep>,
	scenario: DemoScenario,
	recipe: string,
	step: string
): string {
	const n = stepFeatures(scenario, recipe, step).length;
	const lines = [csvHeader(scenario, recipe, step)];
	for (const r of rows) {
		if (r.recipe !== recipe || r.step !== step) continue;
		checkWidth(r, n);
		lines.push(csvLine(r));
	}
	return lines.join('\n') + '\n';
}

/**
 * Streaming variant: writes the same file to `path` without holding it in memory.
 * @returns the number of data rows written
 */
export async function writeWaferSummaryCsvFile(
	rows: Iterable<DemoWaferStep>,
	scenario: DemoScenario,
	recipe: string,
	step: string,
	path: string
): Promise<number> {
	const n = stepFeatures(scenario, recipe, step).length;
	const out = createWriteStream(path, { encoding: 'utf8' });
	let count = 0;
	const write = async (s: string) => {
		if (!out.write(s)) await once(out, 'drain');
	};
	try {
		await write(csvHeader(scenario, recipe, step) + '\n');
		// Lines go out in batches of 256: one stream write per line cost as much as formatting it.
		let batch: string[] = [];
		for (const r of rows) {
			if (r.recipe !== recipe || r.step !== step) continue;
			checkWidth(r, n);
			batch.push(csvLine(r));
			count++;
			if (batch.length === 256) {
				await write(batch.join('\n') + '\n');
				batch = [];
			}
		}
		if (batch.length) await write(batch.join('\n') + '\n');
	} finally {
		out.end();
		await once(out, 'finish');
	}
	return count;
}

function stepFeatures(scenario: DemoScenario, recipe: string, step: string) {
	const f = scenario.features[recipe]?.[step];
	if (!f) throw new Error(`demo: no recipe step ${recipe}/${step} in the scenario`);
	return f;
}

function checkWidth(r: DemoWaferStep, n: number) {
	if (r.values.length !== n)
		throw new Error(
			`demo: ${r.waferId} ${r.recipe}/${r.step} has ${r.values.length} values for ${n} features`
		);
}
