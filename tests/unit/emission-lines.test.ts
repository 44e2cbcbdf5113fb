import { describe, expect, it } from 'vitest';
import { EMISSION_LINES, identifyLines } from '../../src/lib/monitoring/emission-lines';

describe('emission line table', () => {
	// Wavelengths: NIST Atomic Spectra Database, air, rounded to 0.1 nm (from memory; see the module doc).
	it.each([
		['Ar I', 750.4],
		['Ar I', 811.5],
		['O I', 777.4],
		['O I', 844.6],
		['F I', 703.7],
		['F I', 685.6],
		['H I', 656.3],
		['H I', 486.1],
		['He I', 587.6],
		['He I', 667.8],
		['Cl I', 837.6]
	])('%s %f nm is in the table', (species, nm) => {
		expect(EMISSION_LINES.some((l) => l.species === species && l.wavelengthNm === nm)).toBe(true);
	});
	// N2 second positive 337.1 / 357.7 and CO Ångström 483.5: Pearse & Gaydon 1976 (from memory).
	it.each([337.1, 357.7, 483.5])('molecular band head %f nm is in the table', (nm) => {
		expect(EMISSION_LINES.some((l) => l.wavelengthNm === nm)).toBe(true);
	});
	it('names a channel by its nearest line within the tolerance', () => {
		expect(identifyLines(777.0)[0].species).toBe('O I');
		expect(identifyLines(751.2)[0].wavelengthNm).toBe(750.4);
		expect(identifyLines(600.0)).toEqual([]);
		expect(identifyLines(705.5, 2.0).map((l) => l.wavelengthNm)).toEqual([706.5, 703.7]);
	});
	it('refuses a non-finite wavelength or a negative tolerance', () => {
		expect(() => identifyLines(Number.NaN)).toThrow(RangeError);
		expect(() => identifyLines(700, -1)).toThrow(RangeError);
	});
});
