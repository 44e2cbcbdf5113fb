/**
 * Plasma emission lines and molecular band heads, to name OES channels, and the rule that names a
 * channel only when the data grid supports it.
 *
 * Sources. Atomic lines: NIST Atomic Spectra Database (A. Kramida, Yu. Ralchenko, J. Reader and NIST
 * ASD Team, NIST ASD version 5, National Institute of Standards and Technology), wavelengths in air,
 * rounded to 0.1 nm. Molecular band heads: R. W. B. Pearse and A. G. Gaydon, "The Identification of
 * Molecular Spectra", 4th ed., Chapman & Hall (1976), air wavelengths of the (v′, v″) heads named in
 * each note. This machine has no network: every value was transcribed from memory of those tables and
 * is marked `fromMemory: true`; check a value against the source before relying on its last digit.
 * Rounded to 0.1 nm, they are well inside the 1–2 nm resolution of fab OES (DOMAIN notes, memory).
 */
export interface EmissionLine {
	/** Species as written by spectroscopists, e.g. "Ar I" (neutral argon), "N₂⁺" or "N2" (band). */
	species: string;
	/** Element or molecule the leak rule and the screens group by: "Ar", "N2", "N2+", "CN", "He", … */
	element: string;
	/** Air wavelength in nm (band head for a molecular band). */
	wavelengthNm: number;
	/** Short note an engineer reads next to a contributing channel. */
	note: string;
	/** Source of the wavelength. */
	source: 'NIST ASD' | 'Pearse & Gaydon 1976';
	/** The value was written from memory of the source, not copied from it (see the file's header). */
	fromMemory: true;
}

const atom = (species: string, element: string, nm: number, note: string): EmissionLine => ({ species, element, wavelengthNm: nm, note, source: 'NIST ASD', fromMemory: true });
const band = (species: string, element: string, nm: number, note: string): EmissionLine => ({ species, element, wavelengthNm: nm, note, source: 'Pearse & Gaydon 1976', fromMemory: true });

/**
 * The lines etch engineers read first (and the ones the demo's spectra emit): leak and water tracers,
 * etchant radicals, the argon actinometer.
 */
export const KEY_EMISSION_LINES: readonly EmissionLine[] = [
	band('N2', 'N2', 337.1, 'N₂ second positive (0,0): air leak'),
	band('N2', 'N2', 357.7, 'N₂ second positive (0,1): air leak'),
	band('N2', 'N2', 380.5, 'N₂ second positive (0,2): air leak'),
	band('CN', 'CN', 388.3, 'CN violet (0,0): air leak in carbon chemistry'),
	band('OH', 'OH', 309.0, 'OH A–X (0,0): water / humidity'),
	atom('H I', 'H', 486.1, 'Hβ: hydrogen, water'),
	band('CO', 'CO', 483.5, 'CO Ångström (0,2): resist / carbon etch product'),
	atom('He I', 'He', 587.6, 'helium: backside He leak'),
	atom('H I', 'H', 656.3, 'Hα: hydrogen, water'),
	atom('He I', 'He', 667.8, 'helium: backside He leak'),
	atom('F I', 'F', 685.6, 'atomic fluorine: etchant'),
	atom('F I', 'F', 703.7, 'atomic fluorine: etchant (actinometry with Ar 750.4)'),
	atom('He I', 'He', 706.5, 'helium: backside He leak'),
	atom('Ar I', 'Ar', 750.4, 'argon: actinometer'),
	atom('O I', 'O', 777.4, 'atomic oxygen triplet: O₂ flow, air leak, seasoning'),
	atom('Ar I', 'Ar', 811.5, 'argon'),
	atom('Cl I', 'Cl', 837.6, 'atomic chlorine: etchant'),
	atom('O I', 'O', 844.6, 'atomic oxygen: O₂ flow, air leak')
];

/** Every line and band head Lockstep can name a channel after (the key lines first). */
export const EMISSION_LINES: readonly EmissionLine[] = [
	...KEY_EMISSION_LINES,
	// hydrogen Balmer series
	atom('H I', 'H', 434.0, 'Hγ: hydrogen, water'),
	atom('H I', 'H', 410.2, 'Hδ: hydrogen, water'),
	// helium
	atom('He I', 'He', 501.6, 'helium: backside He leak'),
	atom('He I', 'He', 447.1, 'helium: backside He leak'),
	atom('He I', 'He', 388.9, 'helium: backside He leak (blends with CN 388.3 on a coarse grid)'),
	atom('He I', 'He', 728.1, 'helium: backside He leak'),
	// argon, neutral and ion
	atom('Ar I', 'Ar', 696.5, 'argon'),
	atom('Ar I', 'Ar', 706.7, 'argon (next to He I 706.5)'),
	atom('Ar I', 'Ar', 738.4, 'argon'),
	atom('Ar I', 'Ar', 751.5, 'argon'),
	atom('Ar I', 'Ar', 763.5, 'argon'),
	atom('Ar I', 'Ar', 772.4, 'argon'),
	atom('Ar I', 'Ar', 794.8, 'argon'),
	atom('Ar I', 'Ar', 801.5, 'argon'),
	atom('Ar I', 'Ar', 826.5, 'argon'),
	atom('Ar I', 'Ar', 842.5, 'argon'),
	atom('Ar I', 'Ar', 912.3, 'argon'),
	atom('Ar II', 'Ar+', 434.8, 'argon ion: electron temperature, RF power'),
	atom('Ar II', 'Ar+', 480.6, 'argon ion: electron temperature, RF power'),
	atom('Ar II', 'Ar+', 488.0, 'argon ion: electron temperature, RF power'),
	// oxygen
	atom('O I', 'O', 615.8, 'atomic oxygen: O₂ flow, air leak'),
	atom('O I', 'O', 926.6, 'atomic oxygen: O₂ flow, air leak'),
	// fluorine
	atom('F I', 'F', 623.9, 'atomic fluorine: etchant'),
	atom('F I', 'F', 634.9, 'atomic fluorine: etchant'),
	atom('F I', 'F', 690.2, 'atomic fluorine: etchant'),
	atom('F I', 'F', 712.8, 'atomic fluorine: etchant'),
	atom('F I', 'F', 739.9, 'atomic fluorine: etchant'),
	atom('F I', 'F', 775.5, 'atomic fluorine: etchant'),
	// chlorine
	atom('Cl I', 'Cl', 725.7, 'atomic chlorine: etchant'),
	atom('Cl I', 'Cl', 754.7, 'atomic chlorine: etchant'),
	atom('Cl I', 'Cl', 808.7, 'atomic chlorine: etchant'),
	atom('Cl I', 'Cl', 858.6, 'atomic chlorine: etchant'),
	// atomic nitrogen
	atom('N I', 'N', 742.4, 'atomic nitrogen: N₂ process gas or air leak'),
	atom('N I', 'N', 744.2, 'atomic nitrogen: N₂ process gas or air leak'),
	atom('N I', 'N', 746.8, 'atomic nitrogen: N₂ process gas or air leak'),
	atom('N I', 'N', 821.6, 'atomic nitrogen: N₂ process gas or air leak'),
	atom('N I', 'N', 868.0, 'atomic nitrogen: N₂ process gas or air leak'),
	// etch products and substrate species
	atom('C I', 'C', 247.9, 'atomic carbon: resist, fluorocarbon chemistry'),
	atom('Si I', 'Si', 251.6, 'silicon: etch product (endpoint)'),
	atom('Si I', 'Si', 288.2, 'silicon: etch product (endpoint)'),
	atom('Si I', 'Si', 390.6, 'silicon: etch product (endpoint)'),
	atom('Al I', 'Al', 308.2, 'aluminium: metal etch product, chamber parts'),
	atom('Al I', 'Al', 309.3, 'aluminium: metal etch product (blends with OH 309.0)'),
	atom('Al I', 'Al', 394.4, 'aluminium: metal etch product, chamber parts'),
	atom('Al I', 'Al', 396.2, 'aluminium: metal etch product, chamber parts'),
	atom('B I', 'B', 249.7, 'boron: BCl₃ chemistry'),
	atom('Na I', 'Na', 589.0, 'sodium D₂: contamination'),
	atom('Na I', 'Na', 589.6, 'sodium D₁: contamination'),
	// N₂ second positive system (C³Πu – B³Πg)
	band('N2', 'N2', 315.9, 'N₂ second positive (1,0): air leak'),
	band('N2', 'N2', 353.7, 'N₂ second positive (1,2): air leak'),
	band('N2', 'N2', 375.5, 'N₂ second positive (1,3): air leak'),
	band('N2', 'N2', 399.8, 'N₂ second positive (1,4): air leak'),
	band('N2', 'N2', 405.9, 'N₂ second positive (0,3): air leak'),
	// N₂⁺ first negative system (B²Σu⁺ – X²Σg⁺)
	band('N₂⁺', 'N2+', 391.4, 'N₂⁺ first negative (0,0): air leak, N₂ plasma'),
	band('N₂⁺', 'N2+', 427.8, 'N₂⁺ first negative (0,1): air leak, N₂ plasma'),
	band('N₂⁺', 'N2+', 358.2, 'N₂⁺ first negative (1,0): air leak, N₂ plasma'),
	band('N₂⁺', 'N2+', 470.9, 'N₂⁺ first negative (0,2): air leak, N₂ plasma'),
	// CN violet system (B²Σ⁺ – X²Σ⁺)
	band('CN', 'CN', 387.1, 'CN violet (1,1): air leak in carbon chemistry'),
	band('CN', 'CN', 421.6, 'CN violet (0,1): air leak in carbon chemistry'),
	band('CN', 'CN', 359.0, 'CN violet (1,0): air leak in carbon chemistry'),
	// CO Ångström system (B¹Σ⁺ – A¹Π) and third positive system (b³Σ⁺ – a³Π)
	band('CO', 'CO', 451.1, 'CO Ångström (0,1): resist / carbon etch product'),
	band('CO', 'CO', 519.8, 'CO Ångström (0,3): resist / carbon etch product'),
	band('CO', 'CO', 561.0, 'CO Ångström (0,4): resist / carbon etch product'),
	band('CO', 'CO', 607.9, 'CO Ångström (0,5): resist / carbon etch product'),
	band('CO', 'CO', 283.3, 'CO third positive (0,1): resist / carbon etch product'),
	band('CO', 'CO', 297.7, 'CO third positive (0,2): resist / carbon etch product'),
	// OH A²Σ⁺ – X²Π, NH A³Π – X³Σ⁻, CH A²Δ – X²Π
	band('OH', 'OH', 306.4, 'OH A–X (0,0) head: water / humidity'),
	band('OH', 'OH', 281.1, 'OH A–X (1,0): water / humidity'),
	band('NH', 'NH', 336.0, 'NH A–X (0,0): ammonia or hydrogen with nitrogen (next to N₂ 337.1)'),
	band('CH', 'CH', 431.4, 'CH A–X (0,0): hydrocarbon, resist'),
	// C₂ Swan system (d³Πg – a³Πu)
	band('C2', 'C2', 516.5, 'C₂ Swan (0,0): carbon-rich plasma, polymer'),
	band('C2', 'C2', 563.6, 'C₂ Swan (0,1): carbon-rich plasma, polymer'),
	band('C2', 'C2', 473.7, 'C₂ Swan (1,0): carbon-rich plasma, polymer'),
	// fluorocarbon and silicon halide radicals
	band('CF2', 'CF2', 251.9, 'CF₂ Ã–X̃: fluorocarbon polymer precursor'),
	band('CF2', 'CF2', 259.5, 'CF₂ Ã–X̃: fluorocarbon polymer precursor'),
	band('SiF', 'SiF', 440.0, 'SiF: silicon etch product in fluorine chemistry')
];

/**
 * Without the channel grid, a channel is named only within this many nm of a line: half of a 1 nm
 * summary grid, a fine spectrometer's (memory). Pass the grid for the exact rule.
 */
export const DEFAULT_MATCH_NM = 0.5;
/** Never name a channel farther than this from the line: the 1–2 nm resolution of fab OES (memory). */
export const MAX_MATCH_NM = 1.5;

/** A channel grid: the sorted wavelengths of every OES channel of a recipe step. */
export type ChannelGrid = readonly number[];

/**
 * The sorted, de-duplicated channel wavelengths read from feature names (or given wavelengths).
 * @param features feature names such as "oes_777.4" (names without a wavelength are skipped) or nm
 * @returns the grid, ascending
 * @throws nothing
 * @example channelGrid(['oes_777.4', 'rf_w', 'oes_750.4']) // → [750.4, 777.4]
 */
export function channelGrid(features: readonly (string | number | null | undefined)[]): number[] {
	const out = new Set<number>();
	for (const f of features) {
		const nm = typeof f === 'number' ? f : typeof f === 'string' ? wavelengthOf(f) : null;
		if (nm !== null && Number.isFinite(nm)) out.add(nm);
	}
	return [...out].sort((a, b) => a - b);
}

/** The half-widths of a channel's cell in its grid: half the gap to each neighbour. */
function cellOf(nm: number, grid: ChannelGrid): { left: number; right: number } {
	// binary search for the channel (or the insertion point when the channel is not on the grid)
	let lo = 0;
	let hi = grid.length;
	while (lo < hi) {
		const mid = (lo + hi) >> 1;
		if (grid[mid] < nm) lo = mid + 1;
		else hi = mid;
	}
	const at = lo < grid.length && Math.abs(grid[lo] - nm) < 1e-9 ? lo : -1;
	const prev = at >= 0 ? grid[at - 1] : grid[lo - 1];
	const next = at >= 0 ? grid[at + 1] : grid[lo];
	let left = prev !== undefined ? (nm - prev) / 2 : Number.NaN;
	let right = next !== undefined ? (next - nm) / 2 : Number.NaN;
	if (Number.isNaN(left)) left = right;
	if (Number.isNaN(right)) right = left;
	if (Number.isNaN(left)) left = right = DEFAULT_MATCH_NM; // a single channel: no spacing known
	return { left: Math.min(left, MAX_MATCH_NM), right: Math.min(right, MAX_MATCH_NM) };
}

/**
 * The emission lines a channel may be named after, nearest first.
 *
 * Rule: with the channel grid, a line belongs to the channel whose cell holds it — within half the
 * gap to the neighbouring channel on its side (so the channel is the line's nearest channel, and a
 * finer grid names fewer lines), and never beyond 1.5 nm (the spectrometer's resolution, memory).
 * With a number instead, lines within that tolerance; with neither, within 0.5 nm. The first entry is
 * the line the channel is named after; further entries are lines blended in the same cell. A line
 * exactly half-way between two channels belongs to the upper one.
 * Source of the line wavelengths: {@link EMISSION_LINES}. The cell rule is Lockstep's (a channel
 * integrates the light between the midpoints to its neighbours; common practice for binned spectra).
 *
 * @param wavelengthNm channel centre wavelength in nm
 * @param gridOrTolerance the step's channel grid ({@link channelGrid}), or a tolerance in nm
 * @returns lines in the channel's cell, nearest first (possibly empty)
 * @throws RangeError on a non-finite wavelength or a negative tolerance
 * @example identifyLines(336.5, [335.9, 336.5, 337.1])  // → [] (N₂ 337.1 and NH 336.0 lie in the neighbours' cells)
 * @example identifyLines(777.0, 1.5)[0].species // → 'O I'
 */
export function identifyLines(wavelengthNm: number, gridOrTolerance?: number | ChannelGrid): EmissionLine[] {
	if (!Number.isFinite(wavelengthNm)) throw new RangeError('wavelength must be a finite number of nm');
	let left: number;
	let right: number;
	// On a grid, a line exactly on the boundary of two cells belongs to the upper channel only.
	let upperOpen = false;
	if (typeof gridOrTolerance === 'number' || gridOrTolerance === undefined) {
		const tol = gridOrTolerance ?? DEFAULT_MATCH_NM;
		if (!(tol >= 0)) throw new RangeError('tolerance must be ≥ 0 nm');
		left = right = tol;
	} else {
		({ left, right } = cellOf(wavelengthNm, gridOrTolerance));
		upperOpen = right < MAX_MATCH_NM;
	}
	const eps = 1e-9;
	return EMISSION_LINES.filter((l) => {
		const d = l.wavelengthNm - wavelengthNm;
		if (d < 0) return -d <= left + eps;
		return upperOpen ? d < right - eps : d <= right + eps;
	}).sort((a, b) => Math.abs(a.wavelengthNm - wavelengthNm) - Math.abs(b.wavelengthNm - wavelengthNm));
}

function wavelengthOf(featureName: string): number | null {
	for (const m of featureName.matchAll(/(\d{3,4}(?:\.\d+)?)/g)) {
		const v = Number(m[1]);
		if (v >= 150 && v <= 1200) return v;
	}
	return null;
}

/**
 * The emission lines an OES feature's name points at, nearest first: reads the wavelength from the
 * name and applies {@link identifyLines} with the step's grid (or a tolerance).
 * Source: line table {@link EMISSION_LINES} (NIST ASD; Pearse & Gaydon 1976).
 *
 * @param featureName e.g. "oes_777.2"
 * @param gridOrTolerance the step's channel grid, or a tolerance in nm (default 0.5 nm)
 * @returns matching lines, nearest first; empty when the name carries no wavelength
 * @throws RangeError on a negative tolerance
 * @example identifyFeature('oes_656.3')[0].species // → 'H I'
 */
export function identifyFeature(featureName: string, gridOrTolerance?: number | ChannelGrid): EmissionLine[] {
	const nm = wavelengthOf(featureName);
	return nm === null ? [] : identifyLines(nm, gridOrTolerance);
}
