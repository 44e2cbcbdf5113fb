/**
 * Common plasma emission lines used to name OES channels and to build the demo spectra.
 *
 * Atomic lines: NIST Atomic Spectra Database (A. Kramida, Yu. Ralchenko, J. Reader and NIST ASD Team,
 * NIST ASD version 5, National Institute of Standards and Technology), wavelengths in air, rounded to
 * 0.1 nm. This machine has no network, so the values were transcribed from memory of the ASD entries
 * and are marked "from memory"; each agrees with the rounded value quoted in the project's issue text.
 * Molecular band heads (N2 second positive system, CO Ångström system, CN violet, OH A–X) are not in the
 * atomic database: R. W. B. Pearse and A. G. Gaydon, "The Identification of Molecular Spectra",
 * 4th ed., Chapman & Hall (1976) — also from memory.
 */
export interface EmissionLine {
	/** Species as written by spectroscopists, e.g. "Ar I" (neutral argon) or "N2" (molecular band). */
	species: string;
	/** Element or molecule, e.g. "Ar", "N2". */
	element: string;
	/** Air wavelength in nm. */
	wavelengthNm: number;
	/** Short note an engineer reads next to a contributing channel. */
	note: string;
	/** Source of the wavelength. */
	source: 'NIST ASD' | 'Pearse & Gaydon 1976';
}

export const EMISSION_LINES: readonly EmissionLine[] = [
	{ species: 'N2', element: 'N2', wavelengthNm: 337.1, note: 'N₂ second positive (0,0): air leak', source: 'Pearse & Gaydon 1976' },
	{ species: 'N2', element: 'N2', wavelengthNm: 357.7, note: 'N₂ second positive (0,1): air leak', source: 'Pearse & Gaydon 1976' },
	{ species: 'N2', element: 'N2', wavelengthNm: 380.5, note: 'N₂ second positive (0,2): air leak', source: 'Pearse & Gaydon 1976' },
	{ species: 'CN', element: 'CN', wavelengthNm: 388.3, note: 'CN violet (0,0): air leak in carbon chemistry', source: 'Pearse & Gaydon 1976' },
	{ species: 'OH', element: 'OH', wavelengthNm: 309.0, note: 'OH A–X (0,0): water / humidity', source: 'Pearse & Gaydon 1976' },
	{ species: 'H I', element: 'H', wavelengthNm: 486.1, note: 'Hβ: hydrogen, water', source: 'NIST ASD' },
	{ species: 'CO', element: 'CO', wavelengthNm: 483.5, note: 'CO Ångström (0,1): resist / carbon etch product', source: 'Pearse & Gaydon 1976' },
	{ species: 'He I', element: 'He', wavelengthNm: 587.6, note: 'helium: backside He leak', source: 'NIST ASD' },
	{ species: 'H I', element: 'H', wavelengthNm: 656.3, note: 'Hα: hydrogen, water', source: 'NIST ASD' },
	{ species: 'He I', element: 'He', wavelengthNm: 667.8, note: 'helium: backside He leak', source: 'NIST ASD' },
	{ species: 'F I', element: 'F', wavelengthNm: 685.6, note: 'atomic fluorine: etchant', source: 'NIST ASD' },
	{ species: 'F I', element: 'F', wavelengthNm: 703.7, note: 'atomic fluorine: etchant (actinometry with Ar 750.4)', source: 'NIST ASD' },
	{ species: 'He I', element: 'He', wavelengthNm: 706.5, note: 'helium: backside He leak', source: 'NIST ASD' },
	{ species: 'Ar I', element: 'Ar', wavelengthNm: 750.4, note: 'argon: actinometer', source: 'NIST ASD' },
	{ species: 'O I', element: 'O', wavelengthNm: 777.4, note: 'atomic oxygen triplet: O₂ flow, air leak, seasoning', source: 'NIST ASD' },
	{ species: 'Ar I', element: 'Ar', wavelengthNm: 811.5, note: 'argon', source: 'NIST ASD' },
	{ species: 'Cl I', element: 'Cl', wavelengthNm: 837.6, note: 'atomic chlorine: etchant', source: 'NIST ASD' },
	{ species: 'O I', element: 'O', wavelengthNm: 844.6, note: 'atomic oxygen: O₂ flow, air leak', source: 'NIST ASD' }
];

/**
 * The emission lines within `toleranceNm` of a channel's wavelength, nearest first.
 *
 * Formula: keep lines with |λ_line − λ_channel| ≤ tolerance; order by that distance.
 * Source of the line wavelengths: see {@link EMISSION_LINES}. The tolerance is the spectrometer's
 * resolution, typically 1–2 nm for fab OES (common practice).
 *
 * @param wavelengthNm channel centre wavelength in nm
 * @param toleranceNm half-width of the match window in nm (default 1.5)
 * @returns matching lines, nearest first (possibly empty)
 * @throws RangeError on a non-finite wavelength or a negative tolerance
 * @example identifyLines(777.0) // → [{ species: 'O I', wavelengthNm: 777.4, … }]
 */
export function identifyLines(wavelengthNm: number, toleranceNm = 1.5): EmissionLine[] {
	if (!Number.isFinite(wavelengthNm)) throw new RangeError('wavelength must be a finite number of nm');
	if (!(toleranceNm >= 0)) throw new RangeError('tolerance must be ≥ 0 nm');
	return EMISSION_LINES.filter((l) => Math.abs(l.wavelengthNm - wavelengthNm) <= toleranceNm).sort(
		(a, b) => Math.abs(a.wavelengthNm - wavelengthNm) - Math.abs(b.wavelengthNm - wavelengthNm)
	);
}

/**
 * The emission lines an OES feature's name points at, nearest first: reads the wavelength from the
 * name (see parseChannelWavelength in actinometry.ts) and calls {@link identifyLines}.
 * Source: line table {@link EMISSION_LINES} (NIST ASD; Pearse & Gaydon 1976).
 *
 * @param featureName e.g. "oes_777.2"
 * @param toleranceNm half-width of the match window in nm (default 1.5)
 * @returns matching lines, nearest first; empty when the name carries no wavelength
 * @throws RangeError on a negative tolerance
 * @example identifyFeature('oes_656.0')[0].species // → 'H I'
 */
export function identifyFeature(featureName: string, toleranceNm = 1.5): EmissionLine[] {
	for (const m of featureName.matchAll(/(\d{3,4}(?:\.\d+)?)/g)) {
		const v = Number(m[1]);
		if (v >= 150 && v <= 1200) return identifyLines(v, toleranceNm);
	}
	return [];
}
