import { describe, expect, it } from 'vitest';
import {
	actinometryRatios,
	appendActinometry,
	identifyFeature,
	MonitoringInputError,
	parseChannelWavelength,
	planActinometry
} from '../../../src/lib/monitoring';

// Actinometry: I_X / I_Ar tracks the ground-state density of X (Coburn & Chen 1980, J. Appl. Phys.
// 51:3134); line wavelengths from the NIST Atomic Spectra Database (from memory, see emission-lines.ts).
const names = ['rf_forward_w', 'oes_703.9', 'oes_750.2', 'oes_777.6', 'oes_811.4', 'oes_844.3'];

describe('actinometry ratios', () => {
	const plan = planActinometry(names);
	it('finds O 777.4, O 844.6 and F 703.7 over Ar 750.4 within 1.5 nm', () => {
		expect(plan.ratios.map((r) => [r.name, r.numeratorFeature, r.denominatorFeature])).toEqual([
			['ratio_O777_Ar750', 'oes_777.6', 'oes_750.2'],
			['ratio_O845_Ar750', 'oes_844.3', 'oes_750.2'],
			['ratio_F704_Ar750', 'oes_703.9', 'oes_750.2']
		]);
	});
	it('computes I_X / I_Ar and is blind to a broadband loss such as window clouding', () => {
		const row = [500, 300, 1000, 2000, 1500, 800];
		expect(actinometryRatios(plan, row)).toEqual({ ratio_O777_Ar750: 2, ratio_O845_Ar750: 0.8, ratio_F704_Ar750: 0.3 });
		const clouded = row.map((v, j) => (j === 0 ? v : 0.7 * v));
		const r = actinometryRatios(plan, clouded);
		expect(r.ratio_O777_Ar750).toBeCloseTo(2, 14);
		expect(Array.from(appendActinometry(plan, row)).slice(6)).toEqual([2, 0.8, 0.3]);
	});
	it('skips ratios whose channels are absent and refuses a non-positive argon line', () => {
		expect(planActinometry(['oes_777.4', 'oes_600']).ratios).toEqual([]);
		expect(() => actinometryRatios(plan, [500, 300, 0, 2000, 1500, 800])).toThrow(MonitoringInputError);
		expect(() => actinometryRatios(plan, [500, 300, 0, 2000, 1500, 800])).toThrow(/oes_750.2/);
	});
	it('reads wavelengths from feature names and names the line', () => {
		expect(parseChannelWavelength('oes_777.4nm')).toBe(777.4);
		expect(parseChannelWavelength('OES 656.28')).toBe(656.28);
		expect(parseChannelWavelength('pressure_mtorr')).toBeNull();
		expect(parseChannelWavelength('step5_oes_1100')).toBe(1100);
		expect(identifyFeature('oes_656.0')[0].species).toBe('H I');
		expect(identifyFeature('oes_337.5')[0].element).toBe('N2'); // within 0.5 nm without a grid
		expect(identifyFeature('bias_rf_w')).toEqual([]);
	});
});
