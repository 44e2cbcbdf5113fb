import { describe, expect, it } from 'vitest';
import { channelGrid, EMISSION_LINES, identifyFeature, identifyLines, KEY_EMISSION_LINES } from '../../src/lib/monitoring/emission-lines';

// Every wavelength below is an air wavelength rounded to 0.1 nm, written FROM MEMORY of its source
// (this machine has no network): atomic lines from the NIST Atomic Spectra Database v5; molecular band
// heads from Pearse & Gaydon (1976) "The Identification of Molecular Spectra", 4th ed.
describe('emission line table', () => {
	it('has at least 60 entries, each with its source, all marked from memory, no duplicate wavelength', () => {
		expect(EMISSION_LINES.length).toBeGreaterThanOrEqual(60);
		for (const l of EMISSION_LINES) {
			expect(['NIST ASD', 'Pearse & Gaydon 1976']).toContain(l.source);
			expect(l.fromMemory).toBe(true);
			expect(l.note.length).toBeGreaterThan(3);
		}
		expect(new Set(EMISSION_LINES.map((l) => l.wavelengthNm)).size).toBe(EMISSION_LINES.length);
		// the key lines (demo spectra, key-line charts) are all in the full table
		for (const k of KEY_EMISSION_LINES) expect(EMISSION_LINES).toContain(k);
	});
	// NIST ASD (from memory)
	it.each([
		['Ar I', 750.4],
		['Ar I', 811.5],
		['Ar I', 763.5],
		['O I', 777.4],
		['O I', 844.6],
		['F I', 703.7],
		['F I', 685.6],
		['H I', 656.3],
		['H I', 486.1],
		['He I', 587.6],
		['He I', 667.8],
		['He I', 706.5],
		['Cl I', 837.6],
		['N I', 746.8],
		['Si I', 288.2],
		['C I', 247.9]
	])('%s %f nm is in the table (NIST ASD)', (species, nm) => {
		expect(EMISSION_LINES.some((l) => l.species === species && l.wavelengthNm === nm && l.source === 'NIST ASD')).toBe(true);
	});
	// Pearse & Gaydon 1976 (from memory)
	it.each([
		['N2', 337.1], // N₂ second positive (0,0)
		['N2', 357.7], // (0,1)
		['N2', 380.5], // (0,2)
		['N2+', 391.4], // N₂⁺ first negative (0,0)
		['N2+', 427.8], // (0,1)
		['CN', 388.3], // CN violet (0,0)
		['CO', 451.1], // CO Ångström (0,1)
		['CO', 483.5], // (0,2)
		['CO', 519.8], // (0,3)
		['OH', 306.4], // OH A–X (0,0) head
		['OH', 309.0],
		['CF2', 251.9],
		['SiF', 440.0],
		['C2', 516.5] // C₂ Swan (0,0)
	])('%s band head %f nm is in the table (Pearse & Gaydon)', (element, nm) => {
		expect(EMISSION_LINES.some((l) => l.element === element && l.wavelengthNm === nm && l.source === 'Pearse & Gaydon 1976')).toBe(true);
	});
});

describe('naming a channel only within its cell of the channel grid', () => {
	it('336.5 is not "N₂ 337.1" when a 337.1 channel exists', () => {
		const grid = [335.9, 336.5, 337.1, 337.7];
		expect(identifyLines(336.5, grid)).toEqual([]);
		expect(identifyLines(337.1, grid)[0]).toMatchObject({ element: 'N2', wavelengthNm: 337.1 });
	});
	it('336.5 is not "N₂ 337.1" on a finer grid either (0.2 nm spacing: cell ±0.1 nm)', () => {
		const grid = Array.from({ length: 30 }, (_, i) => +(334 + 0.2 * i).toFixed(1));
		expect(identifyLines(336.6, grid)).toEqual([]);
		expect(identifyLines(337.0, grid)).toEqual([]); // 337.1 lies half-way to 337.2: it belongs to the upper channel only
		expect(identifyLines(337.2, grid).map((l) => l.wavelengthNm)).toEqual([337.1]);
	});
	it('on a coarse 3 nm grid without a 337.1 channel, the 336.5 channel sees the band (cell ±1.5 nm)', () => {
		const grid = [333.5, 336.5, 339.5];
		expect(identifyLines(336.5, grid)[0].wavelengthNm).toBe(336.0); // NH 336.0 is nearer than N₂ 337.1
		expect(identifyLines(336.5, grid).map((l) => l.wavelengthNm)).toEqual([336.0, 337.1]);
	});
	it('388.2 is not "CN 388.3" when a 388.3 channel exists; a 0.5 nm grid names 388.5 after CN', () => {
		expect(identifyLines(388.2, [387.9, 388.2, 388.3, 388.6])).toEqual([]);
		const grid = Array.from({ length: 9 }, (_, i) => 386 + 0.5 * i);
		expect(identifyLines(388.0, grid)).toEqual([]); // CN 388.3 is 0.3 nm away, the cell is ±0.25
		expect(identifyLines(388.5, grid)[0]).toMatchObject({ element: 'CN', wavelengthNm: 388.3 });
	});
	it('never beyond 1.5 nm, however coarse the grid', () => {
		expect(identifyLines(600.0, [590, 600, 610])).toEqual([]); // Na 589.6, CO 607.9: beyond 1.5 nm
	});
	it('reads the wavelength from feature names; channelGrid sorts and skips non-OES names', () => {
		expect(channelGrid(['oes_777.4', 'rf_w', 'oes_750.4', 750.4])).toEqual([750.4, 777.4]);
		const grid = channelGrid(['oes_656.0', 'oes_657.0', 'oes_655.0']);
		expect(identifyFeature('oes_656.0', grid)[0].species).toBe('H I');
		expect(identifyFeature('pressure_mtorr', grid)).toEqual([]);
	});
	it('without a grid, names a channel within 0.5 nm only (or a given tolerance)', () => {
		expect(identifyLines(777.2)[0].species).toBe('O I');
		expect(identifyLines(751.2)[0].wavelengthNm).toBe(751.5);
		expect(identifyLines(336.5).map((l) => l.wavelengthNm)).toEqual([336.0]);
		expect(identifyLines(705.5, 1.3).map((l) => l.wavelengthNm)).toEqual([706.5, 706.7]);
	});
	it('refuses a non-finite wavelength or a negative tolerance', () => {
		expect(() => identifyLines(Number.NaN)).toThrow(RangeError);
		expect(() => identifyLines(700, -1)).toThrow(RangeError);
	});
});
