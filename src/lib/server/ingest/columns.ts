/**
 * The columns of a wafer-summary file: which are the required identifiers, which are optional
 * per-wafer fields, and what kind of feature every other column is (see FORMAT.md).
 */
import { IngestFileError } from './errors.ts';
import { MAX_COLUMNS } from './limits.ts';

export const REQUIRED_COLUMNS = ['wafer_id', 'lot_id', 'chamber_id', 'recipe', 'step', 'processed_at'] as const;
export type RequiredColumn = (typeof REQUIRED_COLUMNS)[number];

/** Optional per-wafer fields stored on the wafer-step itself, not in the feature vector. */
export const OPTIONAL_COLUMNS = ['slot', 'rf_on_s'] as const;
export type OptionalColumn = (typeof OPTIONAL_COLUMNS)[number];

export interface FeatureColumn {
	/** 0-based index of the column in the file */
	index: number;
	name: string;
	kind: 'oes' | 'sensor';
	wavelengthNm: number | null;
	unit: string | null;
}

export interface Header {
	names: string[];
	required: Record<RequiredColumn, number>;
	optional: Partial<Record<OptionalColumn, number>>;
	features: FeatureColumn[];
}

// Unit suffixes of sensor names and how the screens print them. Names without a known suffix are still
// accepted (positions, signals and error counts have no unit) and get a null unit.
const UNITS: Record<string, string> = {
	w: 'W',
	kw: 'kW',
	mtorr: 'mTorr',
	torr: 'Torr',
	pa: 'Pa',
	sccm: 'sccm',
	slm: 'slm',
	c: '°C',
	degc: '°C',
	k: 'K',
	v: 'V',
	mv: 'mV',
	kv: 'kV',
	a: 'A',
	ma: 'mA',
	hz: 'Hz',
	khz: 'kHz',
	mhz: 'MHz',
	ohm: 'Ω',
	s: 's',
	ms: 'ms',
	min: 'min',
	pct: '%',
	percent: '%',
	deg: '°',
	mm: 'mm',
	um: 'µm',
	nm: 'nm',
	a_u: 'a.u.',
	au: 'a.u.'
};

const OES_NAME = /^oes_(\d{3,4}(?:\.\d{1,3})?)$/;
const SENSOR_NAME = /^[a-z][a-z0-9]*(?:_[a-z0-9]+)*$/;
/** Lowest and highest wavelength accepted for an `oes_<nm>` column (fab OES spans ≈ 200–1,000 nm). */
const OES_RANGE_NM = [100, 2000] as const;

/** The unit of a sensor named with a unit suffix (`pressure_mtorr` → mTorr), or null. */
export function unitOf(name: string): string | null {
	const parts = name.split('_');
	if (parts.length < 2) return null;
	const two = parts.slice(-2).join('_');
	if (parts.length >= 3 && UNITS[two]) return UNITS[two];
	return UNITS[parts[parts.length - 1]] ?? null;
}

/** Classify a feature column by its name, or say why the name is not acceptable. */
export function classifyFeature(name: string): Omit<FeatureColumn, 'index'> | { error: string } {
	if (name.length > 64) return { error: 'is longer than 64 characters' };
	if (name.startsWith('oes_')) {
		const m = OES_NAME.exec(name);
		const nm = m ? Number(m[1]) : NaN;
		if (!m || nm < OES_RANGE_NM[0] || nm > OES_RANGE_NM[1])
			return { error: `is not an OES channel name: use oes_<wavelength in nm>, ${OES_RANGE_NM[0]}–${OES_RANGE_NM[1]}, e.g. oes_777.4` };
		return { name, kind: 'oes', wavelengthNm: nm, unit: 'counts' };
	}
	if (!SENSOR_NAME.test(name))
		return { error: 'is not a feature name: use lower-case snake_case with a unit suffix (e.g. pressure_mtorr) or oes_<nm>' };
	if (name.startsWith('ratio_')) return { error: 'uses the ratio_ prefix, which Lockstep keeps for the ratios it derives' };
	return { name, kind: 'sensor', wavelengthNm: null, unit: unitOf(name) };
}

const OTHER_DELIMITERS: Array<[string, string]> = [
	[';', 'semicolons'],
	['\t', 'tabs'],
	['|', 'vertical bars']
];

/**
 * Check the header row and map its columns. Throws IngestFileError (the whole file is refused) for a
 * wrong delimiter, an unnamed, duplicated or badly named column, or a missing required column.
 * @param fields the header's cells as parsed with a comma delimiter
 */
export function analyseHeader(fields: string[]): Header {
	const names = fields.map((f, i) => (i === 0 ? f.replace(/^\uFEFF/, '') : f).trim());
	if (names.length === 1) {
		for (const [d, word] of OTHER_DELIMITERS) {
			if (names[0].includes(d))
				throw new IngestFileError(`The header is separated by ${word}; Lockstep files are comma-separated (,).`, {
					line: 1,
					value: names[0].slice(0, 120)
				});
		}
	}
	if (names.length > MAX_COLUMNS)
		throw new IngestFileError(`The header has ${names.length} columns; at most ${MAX_COLUMNS} are accepted.`, { line: 1 });
	const seen = new Map<string, number>();
	names.forEach((n, i) => {
		if (n === '') throw new IngestFileError(`Column ${i + 1} of the header has no name.`, { line: 1, column: `column ${i + 1}` });
		const before = seen.get(n);
		if (before !== undefined)
			throw new IngestFileError(`Column "${n}" appears twice in the header (columns ${before + 1} and ${i + 1}).`, {
				line: 1,
				column: n
			});
		seen.set(n, i);
	});
	const missing = REQUIRED_COLUMNS.filter((r) => !seen.has(r));
	if (missing.length)
		throw new IngestFileError(
			`The header lacks the required column${missing.length > 1 ? 's' : ''} ${missing.join(', ')} (required: ${REQUIRED_COLUMNS.join(', ')}).`,
			{ line: 1, column: missing[0] }
		);
	const required = Object.fromEntries(REQUIRED_COLUMNS.map((r) => [r, seen.get(r)!])) as Record<RequiredColumn, number>;
	const optional: Header['optional'] = {};
	for (const o of OPTIONAL_COLUMNS) if (seen.has(o)) optional[o] = seen.get(o)!;
	const reserved = new Set<string>([...REQUIRED_COLUMNS, ...OPTIONAL_COLUMNS]);
	const features: FeatureColumn[] = [];
	names.forEach((n, index) => {
		if (reserved.has(n)) return;
		const c = classifyFeature(n);
		if ('error' in c) throw new IngestFileError(`Column "${n}" (column ${index + 1}) ${c.error}.`, { line: 1, column: n });
		features.push({ index, ...c });
	});
	if (features.length === 0)
		throw new IngestFileError('The header has no feature column: add the OES channels (oes_<nm>) and tool sensors.', { line: 1 });
	return { names, required, optional, features };
}
