import { KEY_EMISSION_LINES as EMISSION_LINES } from '../../src/lib/monitoring/emission-lines';

/** Regular grid of the demo spectrometer's summary channels: 200, 203, …, 899 nm. */
export const GRID_START_NM = 200;
export const GRID_STEP_NM = 3;
export const GRID_END_NM = 899;

/**
 * OES channel wavelengths of every demo recipe step, ascending: the regular grid plus one channel at
 * each line of the emission-line table (at its table wavelength, so `oes_777.4` is the O I triplet).
 * Grid points closer than 1 nm to a line channel are dropped so no two channels share a pixel.
 */
export function oesChannels(): number[] {
	const lines = EMISSION_LINES.map((l) => l.wavelengthNm);
	const out = [...lines];
	for (let nm = GRID_START_NM; nm <= GRID_END_NM; nm += GRID_STEP_NM) {
		if (lines.every((l) => Math.abs(l - nm) >= 1)) out.push(nm);
	}
	return out.sort((a, b) => a - b);
}

/** CSV column name of an OES channel: `oes_<nm>` with one decimal. */
export function oesName(nm: number): string {
	return `oes_${nm.toFixed(1)}`;
}

/**
 * Instrument line shape: a Gaussian of full width at half maximum `fwhmNm`, peak 1.
 * g(Δλ) = exp(−4 ln 2 · Δλ² / FWHM²) (the Gaussian written with its FWHM; any optics text).
 */
export function lineShape(deltaNm: number, fwhmNm: number): number {
	return Math.exp((-4 * Math.LN2 * deltaNm * deltaNm) / (fwhmNm * fwhmNm));
}

/** Reference wavelength and exponent of the window-clouding law (demo model). */
export const CLOUDING_REF_NM = 300;
export const CLOUDING_EXPONENT = 3;

/**
 * Viewport transmission after `rfHours` of plasma since the last wet clean:
 * T(λ) = exp(−c · h · (λ₀/λ)^m), λ₀ = 300 nm, m = 3. A film on the window scatters and absorbs short
 * wavelengths more than long ones (the shape is a demo choice, from memory; DOMAIN.md).
 */
export function transmission(wavelengthNm: number, rfHours: number, ratePerHour: number): number {
	return Math.exp(-ratePerHour * rfHours * Math.pow(CLOUDING_REF_NM / wavelengthNm, CLOUDING_EXPONENT));
}

/**
 * Weak plasma continuum at λ, relative to its value at 500 nm, plus an optional CF₂ band hump in
 * fluorocarbon steps (a broad feature near 240–330 nm, from memory; not a tabulated line).
 */
export function continuumAt(wavelengthNm: number, at500: number, cf2Hump: number): number {
	const slope = 0.55 + 0.45 * Math.exp(-((wavelengthNm - 520) ** 2) / (2 * 220 ** 2));
	const hump = cf2Hump * Math.exp(-((wavelengthNm - 270) ** 2) / (2 * 28 ** 2));
	return at500 * slope + hump;
}

/** One emission line as it reaches the spectrometer: centre and peak height (counts). */
export interface RenderedLine {
	wavelengthNm: number;
	peak: number;
}

/**
 * Noise-free spectrum at `wavelengths`: the sum of Gaussian lines on the continuum, times the window
 * transmission and gain, plus the detector's dark offset. The generator uses the same formula with
 * precomputed line-shape weights; tests call this one directly.
 */
export function renderSpectrum(
	wavelengths: readonly number[],
	lines: readonly RenderedLine[],
	o: {
		fwhmNm: number;
		continuum500: number;
		cf2Hump: number;
		gain: number;
		dark: number;
		rfHours: number;
		cloudRate: number;
	}
): number[] {
	return wavelengths.map((nm) => {
		let s = continuumAt(nm, o.continuum500, o.cf2Hump);
		for (const l of lines) s += l.peak * lineShape(nm - l.wavelengthNm, o.fwhmNm);
		return o.gain * transmission(nm, o.rfHours, o.cloudRate) * s + o.dark;
	});
}
