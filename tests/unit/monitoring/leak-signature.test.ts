import { describe, expect, it } from 'vitest';
import {
	EMISSION_LINES,
	fitBaseline,
	goldenZ,
	fleetLeakSignature,
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
// memory); N₂⁺ first negative (0,0) 391.4 — Pearse & Gaydon (from memory); N I 746.8 — NIST ASD (from
// memory). The thresholds of the rule (3 σ, two distinct lines, half of Q, top five) are Lockstep's,
// common practice, not published.

describe('the emission lines the rule reads', () => {
	it.each([
		['N2', 337.1],
		['N2', 357.7],
		['N2', 380.5],
		['N2+', 391.4],
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
		['oes_391.4', 'air'],
		['oes_388.3', 'air'],
		['oes_746.8', 'air'], // N I
		['oes_587.6', 'helium'],
		['oes_667.8', 'helium'],
		['oes_706.5', 'helium'],
		// without a grid only within 0.5 nm: 338.0 is 0.9 nm from the band head
		['oes_338.0', null],
		['oes_703.7', null],
		['oes_777.4', null],
		['oes_656.3', null],
		['oes_750.4', null],
		['backside_he_sccm', null],
		['pressure_mtorr', null]
	])('%s points at %s', (feature, gas) => {
		expect(leakGasOf(feature)).toBe(gas);
	});

	it('the line a channel is named after decides, within its cell of the grid', () => {
		const grid = [335.9, 336.5, 337.1, 387.9, 388.2, 388.3];
		expect(leakGasOf('oes_336.5', grid)).toBeNull(); // N₂ 337.1 has its own channel
		expect(leakGasOf('oes_388.2', grid)).toBeNull(); // CN 388.3 has its own channel
		expect(leakGasOf('oes_337.1', grid)).toBe('air');
	});
});

// Contributors: [feature, share of Q, golden z, significant (beyond its RBC limit)].
const S = (...c: [string, number, number, boolean?][]): LeakContributor[] => c.map(([feature, share, z, significant]) => ({ feature, share, z, significant: significant ?? true }));

describe('leakSignature: the one rule', () => {
	it('two distinct N₂ bands leading Q, risen and significant, are an air leak signature', () => {
		expect(leakSignature('Q', S(['oes_337.1', 0.5, 9], ['oes_357.7', 0.2, 7], ['oes_703.7', 0.1, 1.2]))).toEqual({
			gases: ['air'],
			channels: ['oes_337.1', 'oes_357.7'],
			supporting: [],
			evidence: 'Q'
		});
	});

	it('one channel never makes a signature, however far it rose', () => {
		expect(leakSignature('Q', S(['oes_337.1', 0.9, 40], ['oes_703.7', 0.05, 1]))).toBeNull();
		expect(leakSignature('Q', S(['oes_587.6', 0.9, 40]))).toBeNull();
		expect(leakSignature('fleet', [{ feature: 'oes_337.1', z: 30, significant: true }])).toBeNull();
	});

	it('the issue case: one channel at +3.4 σ next to a band head raises no notice', () => {
		const grid = [335.9, 336.5, 337.1, 387.9, 388.2, 388.3];
		expect(leakSignature('Q', S(['oes_336.5', 0.7, 3.4], ['oes_703.7', 0.1, 1]), grid)).toBeNull();
		expect(leakSignature('Q', S(['oes_388.2', 0.7, 3.4], ['oes_336.5', 0.2, 3.4]), grid)).toBeNull(); // mislabelled channels are not nitrogen features
		expect(leakSignature('Q', S(['oes_336.5', 0.7, 3.4]))).toBeNull();
	});

	it('two channels on one line count once', () => {
		// without a grid both channels are within 0.5 nm of N₂ 337.1: one line, not two
		expect(leakSignature('Q', S(['oes_337.0', 0.5, 9], ['oes_337.2', 0.4, 9]))).toBeNull();
		// on a grid, 337.1 lies half-way between 336.9 and 337.3 and belongs to the upper channel only
		expect(leakSignature('Q', S(['oes_336.9', 0.5, 9], ['oes_337.3', 0.4, 9]), [336.9, 337.3, 340])).toBeNull();
	});

	it('an N₂ band with an oxygen line risen and significant is enough for air; oxygen alone is not', () => {
		const s = leakSignature('Q', S(['oes_337.1', 0.6, 9], ['oes_777.4', 0.2, 6]));
		expect(s).toEqual({ gases: ['air'], channels: ['oes_337.1'], supporting: ['oes_777.4'], evidence: 'Q' });
		expect(leakSignature('Q', S(['oes_337.1', 0.6, 9], ['oes_777.4', 0.2, 6, false]))).toBeNull(); // oxygen inside its limit
		expect(leakSignature('Q', S(['oes_746.8', 0.6, 9], ['oes_777.4', 0.2, 6]))).toBeNull(); // N I is not a band
		expect(leakSignature('Q', S(['oes_777.4', 0.9, 10], ['oes_844.6', 0.1, 8]))).toBeNull();
	});

	it('a contributor inside its contribution limit, or of unknown significance, is no evidence', () => {
		expect(leakSignature('Q', S(['oes_337.1', 0.5, 9], ['oes_357.7', 0.3, 7, false]))).toBeNull();
		expect(leakSignature('Q', [{ feature: 'oes_337.1', share: 0.5, z: 9 }, { feature: 'oes_357.7', share: 0.3, z: 7 }])).toBeNull();
	});

	it.each([['oes_587.6', 'oes_667.8'], ['oes_706.5', 'oes_587.6']])('two He lines %s + %s leading Q are a helium signature', (a, b) => {
		const s = leakSignature('Q', S([a, 0.5, 12], [b, 0.3, 9], ['oes_703.7', 0.1, 2]));
		expect(s?.gases).toEqual(['helium']);
		expect(s?.channels).toEqual([a, b]);
	});

	it('the same bands leading T² are not leak-like (a known direction moved too far)', () => {
		expect(leakSignature('T²', S(['oes_337.1', 0.5, 9], ['oes_357.7', 0.4, 9]))).toBeNull();
	});

	it('falling bands are not leak-like: a leak adds light, it never removes it', () => {
		expect(leakSignature('Q', S(['oes_337.1', 0.8, -9], ['oes_357.7', 0.1, -7]))).toBeNull();
		expect(leakSignature('Q', S(['oes_337.1', 0.5, 2.9], ['oes_357.7', 0.4, 2.9]))).toBeNull();
		expect(leakSignature('Q', S(['oes_337.1', 0.5, 3.1], ['oes_357.7', 0.4, 3.1]))?.gases).toEqual(['air']);
	});

	it('leak lines that do not lead must carry at least half of Q among the top five', () => {
		const lines = (a: number, b: number) => S(['oes_703.7', 0.35, 6], ['oes_337.1', a, 8], ['oes_357.7', b, 7]);
		expect(leakSignature('Q', lines(0.3, 0.2))?.channels).toEqual(['oes_337.1', 'oes_357.7']); // 0.5: enough
		expect(leakSignature('Q', lines(0.25, 0.2))).toBeNull(); // 0.45: not enough
	});

	it('reads only the first five Q contributors', () => {
		const six = S(['oes_703.7', 0.1, 5], ['oes_750.4', 0.1, 4], ['oes_777.4', 0.1, 4], ['oes_656.3', 0.1, 4], ['oes_337.1', 0.3, 20], ['oes_357.7', 0.3, 20]);
		expect(leakSignature('Q', six)).toBeNull();
		expect(leakSignature('Q', [six[4], six[5], ...six.slice(0, 3)])?.gases).toEqual(['air']);
	});

	it('names both gases, air first', () => {
		const s = leakSignature('Q', S(['oes_587.6', 0.3, 10], ['oes_337.1', 0.2, 8], ['oes_706.5', 0.2, 9], ['oes_391.4', 0.1, 5], ['oes_844.6', 0.05, -4]));
		expect(s).toEqual({ gases: ['air', 'helium'], channels: ['oes_587.6', 'oes_337.1', 'oes_706.5', 'oes_391.4'], supporting: [], evidence: 'Q' });
	});

	it('lines that only rise with the whole spectrum (a broadband shift) are not a leak', () => {
		// every channel of a chamber about +3.4 above the fleet, N₂ bands among them (a cleaned window)
		const flat = S(['oes_337.1', 0.3, 3.5], ['oes_357.7', 0.3, 3.4]);
		expect(leakSignature('Q', flat)?.gases).toEqual(['air']); // without the broadband shift …
		expect(leakSignature('Q', flat, undefined, 3.2)).toBeNull(); // … but they stand only 0.3 above it
		expect(leakSignature('Q', S(['oes_337.1', 0.5, 9.5], ['oes_357.7', 0.3, 8]), undefined, 3.2)?.gases).toEqual(['air']);
		const f = (feature: string, z: number) => ({ feature, z, flagged: true });
		expect(fleetLeakSignature([f('oes_337.1', 3.5), f('oes_357.7', 3.4), f('oes_703.7', 3.3)], undefined, 3.1)).toBeNull();
	});

	it('a fleet separation: only named features with a known, positive statistic count', () => {
		const f = (feature: string, z: number | undefined, flagged = true) => ({ feature, z, flagged });
		expect(fleetLeakSignature([f('oes_703.7', 5), f('oes_667.8', 6), f('oes_587.6', 4)])).toEqual({ gases: ['helium'], channels: ['oes_667.8', 'oes_587.6'], supporting: [], evidence: 'fleet' });
		expect(fleetLeakSignature([f('oes_667.8', -6), f('oes_587.6', -5)])).toBeNull(); // below the fleet
		expect(fleetLeakSignature([f('oes_667.8', 6), f('oes_587.6', 5, false)])).toBeNull(); // one named line
		expect(fleetLeakSignature([f('oes_337.1', undefined), f('oes_357.7', undefined)])).toBeNull(); // names only
		expect(fleetLeakSignature([{ feature: 'oes_337.1', modifiedZ: 6, flagged: true }, { feature: 'oes_380.5', modifiedZ: 5, flagged: true }])?.gases).toEqual(['air']); // stored before
		expect(fleetLeakSignature([])).toBeNull();
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

	const shiftedMany = (fs: string[], sds: number) => {
		const x = draw();
		for (const f of fs) x[at(f)] += sds * model.sd[at(f)];
		return x;
	};

	it('an N₂ 337.1 band alone up by 15 golden σ alarms on Q but is not leak-like (one channel)', () => {
		const x = shifted('oes_337.1', 15);
		const s = scoreWafer(model, x);
		expect(s.qRatio).toBeGreaterThan(Math.max(1, s.t2Ratio));
		expect(waferLeakSignature(model, x)).toBeNull();
	});

	it('two N₂ bands (337.1, 357.7) up by 15 golden σ: Q leads, beyond their contribution limits, air', () => {
		const x = shiftedMany(['oes_337.1', 'oes_357.7'], 15);
		expect(waferLeakSignature(model, x)).toMatchObject({ gases: ['air'], evidence: 'Q' });
		expect(waferLeakSignature(model, x)?.channels.sort()).toEqual(['oes_337.1', 'oes_357.7']);
	});

	it.each([['oes_587.6', 'oes_706.5']])('two He lines %s and %s up by 15 golden σ: helium signature', (a, b) => {
		expect(waferLeakSignature(model, shiftedMany([a, b], 15))?.gases).toEqual(['helium']);
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

	it('a wafer inside its limits is not leak-like even with slightly raised N₂ bands', () => {
		const x = shiftedMany(['oes_337.1', 'oes_357.7'], 0.5);
		expect(scoreWafer(model, x).state).toBe('ok');
		expect(waferLeakSignature(model, x)).toBeNull();
	});

	it('refuses a row of the wrong length', () => {
		expect(() => waferLeakSignature(model, [1, 2, 3])).toThrow(/values, expected 14/);
	});
});
