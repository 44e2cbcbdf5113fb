import { describe, expect, it } from 'vitest';
import { KEY_EMISSION_LINES as EMISSION_LINES } from '../../../src/lib/monitoring/emission-lines';
import { oesChannels, oesName, renderSpectrum, transmission } from '../../../seeds/demo/index';
import { col, demo, mean, sd, wafersSinceClean } from './fixture';

// Line wavelengths, air, nm. Atomic lines: NIST Atomic Spectra Database (Kramida, Ralchenko, Reader &
// NIST ASD Team), from memory; molecular band heads: Pearse & Gaydon, "The Identification of
// Molecular Spectra", 4th ed. (1976), from memory. Independent of the table so a typo there fails here.
const REFERENCE_NM = {
	'Ar I': [750.4, 811.5],
	'O I': [777.4, 844.6],
	'F I': [685.6, 703.7],
	'H I': [486.1, 656.3],
	'He I': [587.6, 667.8, 706.5],
	'Cl I': [837.6],
	N2: [337.1, 357.7, 380.5],
	CO: [483.5]
};

describe('demo OES channels', () => {
	const channels = oesChannels();

	it('has ≥ 128 ascending, distinct channels between 200 and 900 nm', () => {
		expect(channels.length).toBeGreaterThanOrEqual(128);
		expect(channels[0]).toBeGreaterThanOrEqual(200);
		expect(channels[channels.length - 1]).toBeLessThanOrEqual(900);
		for (let i = 1; i < channels.length; i++)
			expect(channels[i] - channels[i - 1]).toBeGreaterThanOrEqual(0.9);
	});

	it('has a channel at each reference line, named oes_<nm> with one decimal', () => {
		for (const [species, list] of Object.entries(REFERENCE_NM))
			for (const nm of list) {
				expect(channels, `${species} ${nm}`).toContain(nm);
				expect(EMISSION_LINES.some((l) => l.wavelengthNm === nm)).toBe(true);
			}
		expect(oesName(777.4)).toBe('oes_777.4');
		expect(oesName(200)).toBe('oes_200.0');
	});

	it('every recipe step carries all channels plus ≥ 8 named tool sensors', () => {
		const { scenario } = demo();
		for (const [recipe, steps] of Object.entries(scenario.features))
			for (const [step, feats] of Object.entries(steps)) {
				expect(feats.filter((f) => f.kind === 'oes').map((f) => f.wavelengthNm)).toEqual(channels);
				const sensors = feats.filter((f) => f.kind === 'sensor').map((f) => f.name);
				expect(sensors.length, `${recipe}/${step}`).toBeGreaterThanOrEqual(8);
				for (const s of [
					'rf_forward_w',
					'rf_reflected_w',
					'pressure_mtorr',
					'throttle_pos_pct',
					'chuck_temp_c',
					'rf_on_s'
				])
					expect(sensors).toContain(s);
				expect(sensors.some((s) => /_flow_sccm$/.test(s))).toBe(true);
				for (const s of sensors) expect(s).toMatch(/^[a-z0-9]+(_[a-z0-9]+)*_(w|v|mtorr|pct|sccm|c|s)$/);
			}
		expect(scenario.features['OXV-22'].main_etch.map((f) => f.name)).toContain('backside_he_sccm');
		expect(scenario.features['OXV-22'].main_etch.map((f) => f.name)).toContain('dc_bias_v');
	});
});

describe('demo spectra', () => {
	it('peak at the table wavelengths (Gaussian lines, neighbours included)', () => {
		const grid = Array.from({ length: 70_001 }, (_, i) => 200 + i * 0.01);
		const lines = EMISSION_LINES.map((l) => ({ wavelengthNm: l.wavelengthNm, peak: 5000 }));
		const s = renderSpectrum(grid, lines, {
			fwhmNm: 1.6,
			continuum500: 300,
			cf2Hump: 800,
			gain: 1,
			dark: 100,
			rfHours: 2,
			cloudRate: 0.07
		});
		for (const l of EMISSION_LINES) {
			let best = -1;
			for (let i = 0; i < grid.length; i++)
				if (Math.abs(grid[i] - l.wavelengthNm) <= 1 && (best < 0 || s[i] > s[best])) best = i;
			expect(Math.abs(grid[best] - l.wavelengthNm), `${l.species} ${l.wavelengthNm}`).toBeLessThanOrEqual(
				0.05
			);
		}
		// FWHM: half the peak height 0.8 nm either side of an isolated line (Ar I 750.4).
		const at = (nm: number) =>
			renderSpectrum([nm], [{ wavelengthNm: 750.4, peak: 1000 }], {
				fwhmNm: 1.6,
				continuum500: 0,
				cf2Hump: 0,
				gain: 1,
				dark: 0,
				rfHours: 0,
				cloudRate: 0
			})[0];
		expect(at(750.4 + 0.8) / at(750.4)).toBeCloseTo(0.5, 6);
	});

	it('show each recipe step’s lines above their neighbouring channels, and no N2 (faint He) when healthy', () => {
		const { scenario, rows } = demo();
		const present: Record<string, number[]> = {
			'OXV-22/main_etch': [750.4, 811.5, 777.4, 844.6, 703.7, 685.6, 656.3, 483.5],
			'PGE-14/main_etch': [837.6, 656.3, 486.1, 750.4, 811.5, 777.4],
			'PGE-14/breakthrough': [703.7, 685.6, 750.4, 811.5],
			'PRS-60/bulk_strip': [777.4, 844.6, 483.5, 656.3, 750.4, 309.0]
		};
		// No air in a healthy chamber: N2 channels show continuum only. Helium from the chuck's
		// normal edge leak is faint (at most a few tens of counts) until the seal fails.
		const absent: [number, number][] = [
			[337.1, 1.1],
			[357.7, 1.1],
			[380.5, 1.1],
			[587.6, 1.3],
			[667.8, 1.3]
		];
		for (const [key, nms] of Object.entries(present)) {
			const [recipe, step] = key.split('/');
			const chamber = scenario.chambers.find((c) => c.recipes.includes(recipe))!.code;
			const g = rows.filter((r) => r.chamberCode === chamber && r.step === step && r.golden);
			const channels = oesChannels();
			const avg = (nm: number) => mean(g.map((r) => r.values[channels.indexOf(nm)]));
			for (const nm of nms) {
				const i = channels.indexOf(nm);
				const side = Math.max(avg(channels[i - 1]), avg(channels[i + 1]));
				expect(avg(nm), `${key} ${nm}`).toBeGreaterThan(1.3 * side);
			}
			for (const [nm, factor] of absent) {
				const i = channels.indexOf(nm);
				const side = (avg(channels[i - 1]) + avg(channels[i + 1])) / 2;
				expect(avg(nm), `${key} ${nm} should be (nearly) continuum only`).toBeLessThan(factor * side);
			}
		}
	});

	it('window clouding: transmission falls faster at short wavelengths and is 1 after a clean', () => {
		expect(transmission(250, 0, 0.07)).toBe(1);
		expect(transmission(250, 3, 0.07)).toBeLessThan(transmission(400, 3, 0.07));
		expect(transmission(400, 3, 0.07)).toBeLessThan(transmission(800, 3, 0.07));
		expect(transmission(800, 3, 0.07)).toBeGreaterThan(0.98);
	});

	it('window clouding in the data: late in a clean cycle short wavelengths lose more than long ones', () => {
		const { scenario, rows } = demo();
		const since = wafersSinceClean(scenario, rows);
		const chambers = ['DE01-A', 'CE02-B', 'ST01-C'];
		for (const code of chambers) {
			const step = scenario.recipes.find(
				(r) => r.code === scenario.chambers.find((c) => c.code === code)!.recipes[0]
			)!.steps[0];
			const recipe = scenario.chambers.find((c) => c.code === code)!.recipes[0];
			const mine = rows.filter(
				(r) => r.chamberCode === code && r.step === step.name && (since.get(r) ?? -1) >= 30
			);
			const n = mine.map((r) => since.get(r)!);
			const early = mine.filter((_, i) => n[i] < 60);
			const late = mine.filter((_, i) => n[i] > 110);
			expect(early.length).toBeGreaterThan(20);
			expect(late.length).toBeGreaterThan(20);
			const ratio = (name: string) => {
				const i = col(scenario, recipe, step.name, name);
				return mean(late.map((r) => r.values[i])) / mean(early.map((r) => r.values[i]));
			};
			expect(ratio('oes_230.0'), code).toBeLessThan(ratio('oes_860.0') - 0.03);
			expect(ratio('oes_410.0')).toBeLessThan(ratio('oes_860.0'));
			expect(ratio('oes_860.0')).toBeGreaterThan(0.97);
		}
	});

	it('seasoning after a wet clean: F 703.7 starts high and O 777.4 low against Ar 750.4, then settle', () => {
		const { scenario, rows } = demo();
		const since = wafersSinceClean(scenario, rows);
		const [f, o, ar] = ['oes_703.7', 'oes_777.4', 'oes_750.4'].map((n) =>
			col(scenario, 'OXV-22', 'main_etch', n)
		);
		for (const code of ['DE01-A', 'DE01-B', 'DE02-C', 'DE03-B']) {
			const mine = rows.filter(
				(r) => r.chamberCode === code && r.step === 'main_etch' && since.get(r) !== null
			);
			const first = mine.filter((r) => since.get(r)! < 5);
			const settled = mine.filter((r) => since.get(r)! >= 40 && since.get(r)! < 80);
			const m = (rs: typeof mine, i: number) => mean(rs.map((r) => r.values[i] / r.values[ar]));
			expect(m(first, f) / m(settled, f), code).toBeGreaterThan(1.06);
			expect(m(first, o) / m(settled, o), code).toBeLessThan(0.95);
		}
	});

	it('per-chamber spectrometer gain moves whole spectra while line ratios stay put', () => {
		const { scenario, rows } = demo();
		const [a, b] = ['oes_750.4', 'oes_811.5'].map((n) => col(scenario, 'OXV-22', 'main_etch', n));
		const chambers = scenario.chambers.filter((c) => c.recipes.includes('OXV-22')).map((c) => c.code);
		const level: number[] = [];
		const ratio: number[] = [];
		for (const code of chambers) {
			const g = rows.filter((r) => r.chamberCode === code && r.step === 'main_etch' && r.golden);
			level.push(mean(g.map((r) => r.values[a])));
			ratio.push(mean(g.map((r) => r.values[b] / r.values[a])));
		}
		expect(sd(level) / mean(level)).toBeGreaterThan(0.02);
		expect(sd(ratio) / mean(ratio)).toBeLessThan(sd(level) / mean(level) / 2);
	});
});
