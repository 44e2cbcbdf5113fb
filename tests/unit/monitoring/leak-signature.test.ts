import { describe, expect, it } from 'vitest';
import {
	EMISSION_LINES,
	fitBaseline,
	goldenZ,
	leakGasOf,
	leakSignature,
	scoreWafer,
	waferLeakSignature,
	type LeakContributor
} from '../../../src/lib/monitoring';
import { seededNormal } from './helpers';

// Wavelengths (air, nm): N₂ second positive (0,0) 337.1, (0,1) 357.7, (0,2) 380.5 and CN violet
// (0,0) 388.3 — Pearse & Gaydon 1976, "The Identification of Molecular Spectra", 4th ed. (from
// memory); He I 587.6, 667.8, 706.5, F I 703.7, O I 777.4 — NIST Atomic Spectra Database v5 (from
// memory). The thresholds of the rule (3 σ, half of Q, top five) are common practice, not published.
const Q = (...c: [string, number, number?][]): LeakContributor[] => c.map(([feature, share, z]) => ({ feature, share, z }));

describe('the emission lines the rule reads', () => {
	it.each([
		['N2', 337.1],
		['N2', 357.7],
		['N2', 380.5],
		['CN', 388.3],
		['He', 587.6],
		['He', 667.8],
		['He', 706.5]
	])('the line table has %s at %f nm', (element, nm) => {
		expect(EMISSION_LINES.some((l) => l.element === element && l.wavelengthNm === nm)).toBe(true);
	});

	it.each([
		['oes_337.1', 'air'],
		['oes_357.7', 'air'],
		['oes_380.5', 'air'],
		['oes_388.3', 'air'],
		['oes_587.6', 'helium'],
		['oes_667.8', 'helium'],
		['oes_706.5', 'helium'],
		// a channel within the ±1.5 nm window of a band head still counts (resolution 1–2 nm, common practice)
		['oes_338.0', 'air'],
		['oes_703.7', null],
		['oes_777.4', null],
		['oes_656.3', null],
		['oes_750.4', null],
		['backside_he_sccm', null],
		['pressure_mtorr', null]
	])('%s points at %s', (feature, gas) => {
		expect(leakGasOf(feature)).toBe(gas);
	});
});

describe('leakSignature: the one rule', () => {
	it('an N₂ 337.1 band leading Q, risen 9 σ, is an air leak signature', () => {
		expect(leakSignature('Q', Q(['oes_337.1', 0.6, 9], ['oes_703.7', 0.1, 1.2], ['oes_750.4', 0.05, 0.4]))).toEqual({
			gases: ['air'],
			channels: ['oes_337.1'],
			supporting: [],
			evidence: 'Q'
		});
	});

	it.each(['oes_587.6', 'oes_667.8', 'oes_706.5'])('a He line %s leading Q is a helium signature', (he) => {
		const s = leakSignature('Q', Q([he, 0.7, 12], ['oes_703.7', 0.1, 2]));
		expect(s?.gases).toEqual(['helium']);
		expect(s?.channels).toEqual([he]);
	});

	it('the same N₂ band leading T² is not leak-like (a known direction moved too far)', () => {
		expect(leakSignature('T²', Q(['oes_337.1', 0.9, 9]))).toBeNull();
	});

	it('a falling N₂ band is not leak-like: a leak adds light, it never removes it', () => {
		expect(leakSignature('Q', Q(['oes_337.1', 0.8, -9], ['oes_357.7', 0.1, -7]))).toBeNull();
		// risen, but inside the golden ±3σ band: not yet
		expect(leakSignature('Q', Q(['oes_337.1', 0.8, 2.9]))).toBeNull();
		expect(leakSignature('Q', Q(['oes_337.1', 0.8, 3.1]))?.gases).toEqual(['air']);
	});

	it('non-leak species leading Q (F 703.7, O 777.4) are not leak-like', () => {
		expect(leakSignature('Q', Q(['oes_703.7', 0.7, 8], ['oes_777.4', 0.2, 6]))).toBeNull();
		expect(leakSignature('Q', Q(['oes_777.4', 0.9, 10]))).toBeNull();
	});

	it('leak lines that do not lead must carry at least half of Q among the top five', () => {
		const lines = (a: number, b: number) => Q(['oes_703.7', 0.35, 6], ['oes_337.1', a, 8], ['oes_357.7', b, 7]);
		expect(leakSignature('Q', lines(0.3, 0.2))?.channels).toEqual(['oes_337.1', 'oes_357.7']); // 0.5: enough
		expect(leakSignature('Q', lines(0.25, 0.2))).toBeNull(); // 0.45: not enough
		// a falling band's share does not count towards the half
		expect(leakSignature('Q', Q(['oes_703.7', 0.35, 6], ['oes_337.1', 0.3, 8], ['oes_357.7', 0.2, -7]))).toBeNull();
	});

	it('reads only the first five contributors', () => {
		const six = Q(['oes_703.7', 0.1, 5], ['oes_750.4', 0.1, 4], ['oes_777.4', 0.1, 4], ['oes_656.3', 0.1, 4], ['oes_844.6', 0.1, 4], ['oes_337.1', 0.9, 20]);
		expect(leakSignature('Q', six)).toBeNull();
		expect(leakSignature('Q', [six[5], ...six.slice(0, 4)])?.gases).toEqual(['air']);
	});

	it('names both gases, air first, and oxygen lines risen with air as support', () => {
		const s = leakSignature('Q', Q(['oes_587.6', 0.4, 10], ['oes_337.1', 0.3, 8], ['oes_777.4', 0.1, 5], ['oes_844.6', 0.05, -4]));
		expect(s).toEqual({ gases: ['air', 'helium'], channels: ['oes_587.6', 'oes_337.1'], supporting: ['oes_777.4'], evidence: 'Q' });
		expect(leakSignature('Q', Q(['oes_587.6', 0.6, 10], ['oes_777.4', 0.2, 6]))?.supporting).toEqual([]);
	});

	it('a fleet separation: any leak line among the flagged features, unless the chamber sits below the fleet', () => {
		const f = (feature: string, z?: number) => ({ feature, z });
		expect(leakSignature('fleet', [f('oes_703.7'), f('oes_750.4'), f('oes_667.8')])).toEqual({ gases: ['helium'], channels: ['oes_667.8'], supporting: [], evidence: 'fleet' });
		expect(leakSignature('fleet', [f('oes_703.7', 6), f('oes_667.8', -5.1)])).toBeNull();
		expect(leakSignature('fleet', [f('oes_703.7'), f('oes_777.4')])).toBeNull();
		expect(leakSignature('fleet', [])).toBeNull();
	});
});

describe('waferLeakSignature on a fitted baseline', () => {
	// Invented demo-like data: twelve OES channels at named lines and two sensors, driven by two
	// latent factors (electron density moves every line, an O₂/F balance moves O and F), noise 1 %.
	const names = ['oes_337.1', 'oes_357.7', 'oes_380.5', 'oes_587.6', 'oes_656.3', 'oes_703.7', 'oes_706.5', 'oes_750.4', 'oes_777.4', 'oes_811.5', 'oes_837.6', 'oes_844.6', 'pressure_mtorr', 'rf_forward_w'];
	const g = seededNormal(20261120);
	const draw = (): number[] => {
		const ne = g();
		const ox = g();
		return names.map((n, j) => {
			const level = 1000 + 80 * j;
			const oxygen = n === 'oes_777.4' || n === 'oes_844.6' ? 40 * ox : n === 'oes_703.7' ? -30 * ox : 0;
			return level + 50 * ne + oxygen + 0.01 * level * g();
		});
	};
	const model = fitBaseline(Array.from({ length: 120 }, draw), { featureNames: names, components: 2 });
	const at = (f: string) => names.indexOf(f);
	const shifted = (f: string, sds: number) => {
		const x = draw();
		x[at(f)] += sds * model.sd[at(f)];
		return x;
	};

	it('goldenZ is zero at the golden mean and (x − mean)/σ elsewhere', () => {
		expect([...goldenZ(model, model.mean)].every((z) => z === 0)).toBe(true);
		const x = Array.from(model.mean);
		x[3] += 2.5 * model.sd[3];
		expect(goldenZ(model, x)[3]).toBeCloseTo(2.5, 12);
	});

	it('an N₂ 337.1 band up by 15 golden σ: Q leads, air leak signature', () => {
		const x = shifted('oes_337.1', 15);
		const s = scoreWafer(model, x);
		expect(s.qRatio).toBeGreaterThan(Math.max(1, s.t2Ratio));
		expect(waferLeakSignature(model, x)).toMatchObject({ gases: ['air'], channels: ['oes_337.1'], evidence: 'Q' });
	});

	it.each(['oes_587.6', 'oes_706.5'])('a He line %s up by 15 golden σ: helium signature', (he) => {
		expect(waferLeakSignature(model, shifted(he, 15))?.gases).toEqual(['helium']);
	});

	it('the same N₂ band down by 15 σ alarms on Q but is not leak-like', () => {
		const x = shifted('oes_337.1', -15);
		expect(scoreWafer(model, x).state).toBe('alarm');
		expect(waferLeakSignature(model, x)).toBeNull();
	});

	it('F 703.7 or O 777.4 up by 15 σ alarms but is not leak-like', () => {
		for (const f of ['oes_703.7', 'oes_777.4']) {
			const x = shifted(f, 15);
			expect(scoreWafer(model, x).state).toBe('alarm');
			expect(waferLeakSignature(model, x)).toBeNull();
		}
	});

	it('a T²-led wafer (every line up with electron density, far beyond the golden spread) is not leak-like', () => {
		// along the model plane: every feature + 50·6, as a six-σ electron-density excursion would give
		const x = draw().map((v) => v + 300);
		const s = scoreWafer(model, x);
		expect(s.t2Ratio).toBeGreaterThan(Math.max(1, s.qRatio));
		expect(waferLeakSignature(model, x)).toBeNull();
	});

	it('a wafer inside its limits is not leak-like even with a slightly raised N₂ band', () => {
		const x = shifted('oes_337.1', 0.5);
		expect(scoreWafer(model, x).state).toBe('ok');
		expect(waferLeakSignature(model, x)).toBeNull();
	});

	it('refuses a row of the wrong length', () => {
		expect(() => waferLeakSignature(model, [1, 2, 3])).toThrow(/values, expected 14/);
	});
});
