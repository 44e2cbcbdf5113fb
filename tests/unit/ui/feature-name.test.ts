import { describe, expect, it } from 'vitest';
import { chemical, featureLabel, nameFeature } from '../../../src/lib/components/display/feature-name';

// Line wavelengths: N₂ second positive band heads 337.1 / 357.7 / 380.5 nm (Pearse & Gaydon 1976, from
// memory), O I 777.4 nm and He I 587.6 nm (NIST ASD, from memory) — the engine's table.
describe('nameFeature: one name for a feature column', () => {
	it.each([
		['oes_337.1', 'N₂ 337.1 nm'],
		['oes_357.7', 'N₂ 357.7 nm'],
		['oes_380.5', 'N₂ 380.5 nm'],
		['oes_777.2', 'O I 777.4 nm'],
		['oes_587.6', 'He I 587.6 nm']
	])('%s → %s', (code, label) => {
		expect(featureLabel(code)).toBe(label);
		expect(nameFeature(code).identified).toBe(true);
	});

	it('never writes N2 without its subscript, in the label or the note', () => {
		for (const code of ['oes_337.1', 'oes_357.7', 'oes_380.5']) {
			const n = nameFeature(code);
			expect(n.label).not.toMatch(/N2/);
			expect(n.note ?? '').not.toMatch(/N2/);
		}
	});

	it('says when a channel sits off its line centre, so two channels never share one name', () => {
		// 0.7 nm off: named with its channel when the engine's window takes it, else by wavelength alone
		expect(['N₂ 337.1 nm (ch. 337.8)', 'OES 337.8 nm']).toContain(featureLabel('oes_337.8'));
		expect(featureLabel('oes_337.8')).not.toBe(featureLabel('oes_337.1'));
		expect(featureLabel('oes_337.3')).toBe('N₂ 337.1 nm');
	});

	it('names a channel with no listed line by its wavelength, and keeps a sensor column as it is', () => {
		expect(nameFeature('oes_512.3')).toMatchObject({ label: 'OES 512.3 nm', identified: false });
		expect(nameFeature('rf_reflected_w')).toMatchObject({ label: 'rf_reflected_w', identified: false, note: null });
		// a sensor whose name holds a number in the OES range is not an OES channel
		expect(nameFeature('chiller_400_c').label).toBe('chiller_400_c');
	});
});

describe('chemical', () => {
	it.each([
		['N2', 'N₂'],
		['SF6', 'SF₆'],
		['CO2+', 'CO₂+'],
		['O I', 'O I'],
		['Ar II', 'Ar II'],
		['C4F8', 'C₄F₈']
	])('%s → %s', (a, b) => expect(chemical(a)).toBe(b));
});
