import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import {
	HEAT_EMPTY_BACKGROUND,
	HEAT_LIMIT,
	HEAT_MAX,
	HEAT_STOPS,
	heatColor,
	heatLegendGradient,
	type HeatTheme
} from '../../../src/lib/components/heat-scale';

// Colour science written out here, independently of heat-scale.ts, so the module is checked
// against the published formulas rather than against itself.
type Vec3 = [number, number, number];

/** sRGB hex → linear RGB: IEC 61966-2-1:1999 transfer function. */
function linear(hex: string): Vec3 {
	return [1, 3, 5].map((i) => {
		const c = parseInt(hex.slice(i, i + 2), 16) / 255;
		return c <= 0.04045 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4;
	}) as Vec3;
}

/** linear RGB → CIELAB (D65): XYZ by the IEC 61966-2-1 matrix, L*a*b* by CIE 15:2004 §8.2.1 (section number from memory). */
function lab([r, g, b]: Vec3): Vec3 {
	const X = (0.4124 * r + 0.3576 * g + 0.1805 * b) / 0.95047;
	const Y = 0.2126 * r + 0.7152 * g + 0.0722 * b;
	const Z = (0.0193 * r + 0.1192 * g + 0.9505 * b) / 1.08883;
	// CIE 15:2004: f(t) = t^(1/3) above (24/116)^3, else (841/108)·t + 16/116
	const f = (t: number) => (t > (24 / 116) ** 3 ? Math.cbrt(t) : (841 / 108) * t + 16 / 116);
	return [116 * f(Y) - 16, 500 * (f(X) - f(Y)), 200 * (f(Y) - f(Z))];
}

const lightness = (hex: string) => lab(linear(hex))[0];

/** CIE 1976 colour difference ΔE*ab between two linear-RGB colours. */
function deltaE(p: Vec3, q: Vec3): number {
	const [a, b] = [lab(p), lab(q)];
	return Math.hypot(a[0] - b[0], a[1] - b[1], a[2] - b[2]);
}

// Machado, Oliveira & Fernandes (2009), IEEE TVCG 15(6) (pages from memory), table of matrices,
// severity 1.0; applied to linear RGB. Clamped to the displayable range as a screen would.
const MACHADO: Record<string, [Vec3, Vec3, Vec3]> = {
	protanopia: [
		[0.152286, 1.052583, -0.204868],
		[0.114503, 0.786281, 0.099216],
		[-0.003882, -0.048116, 1.051998]
	],
	deuteranopia: [
		[0.367322, 0.860646, -0.227968],
		[0.280085, 0.672501, 0.047413],
		[-0.01182, 0.04294, 0.968881]
	],
	tritanopia: [
		[1.255528, -0.076749, -0.178779],
		[-0.078411, 0.930809, 0.147602],
		[0.004733, 0.691367, 0.3039]
	]
};
const simulate = (m: [Vec3, Vec3, Vec3] | null, c: Vec3): Vec3 =>
	m ? (m.map((row) => Math.min(1, Math.max(0, row[0] * c[0] + row[1] * c[1] + row[2] * c[2]))) as Vec3) : c;
const VISIONS: [string, [Vec3, Vec3, Vec3] | null][] = [['normal', null], ...Object.entries(MACHADO)];

const THEMES: HeatTheme[] = ['dark', 'light'];
/** +1 where the scale brightens with r (dark theme), −1 where it darkens (light theme). */
const DIRECTION: Record<HeatTheme, 1 | -1> = { dark: 1, light: -1 };
const samples = (step: number) =>
	Array.from({ length: Math.round(HEAT_MAX / step) + 1 }, (_, i) => +(i * step).toFixed(6));

describe('the L* and simulation helpers of this test', () => {
	// sRGB white, black and primaries: Y of a primary is its row of the IEC 61966-2-1 matrix
	// (0.2126, 0.7152, 0.0722), so L* = 116·Y^(1/3) − 16 (CIE 15:2004). #777777 ≈ L* 50 (from memory).
	it.each([
		['#ffffff', 100],
		['#000000', 0],
		['#ff0000', 53.24],
		['#00ff00', 87.73],
		['#0000ff', 32.3],
		['#777777', 50.04]
	])('L* of %s is %f (±0.02)', (hex, L) => {
		expect(lightness(hex)).toBeCloseTo(L, 1);
	});

	it('uses the linear branch below (24/116)³ and meets the cube-root branch there (CIE 15:2004)', () => {
		// #010101: Y = (1/255)/12.92 = 3.035e-4, L* = 903.3 · Y = 0.274
		expect(lightness('#010101')).toBeCloseTo(0.274, 2);
	});

	it.each(Object.entries(MACHADO))('%s matrix keeps white white (each row sums to 1)', (_, m) => {
		for (const row of m) expect(row[0] + row[1] + row[2]).toBeCloseTo(1, 5);
	});
});

/** The panel colour a heat cell sits on (--ls-surface-1 of the theme in app.css). */
function panelOf(theme: HeatTheme): string {
	const css = readFileSync(new URL('../../../src/app.css', import.meta.url), 'utf8');
	const block = css.split(`:root[data-theme='${theme}']`)[1];
	const panel = /--ls-surface-1:\s*(#[0-9a-f]{6})/i.exec(block)?.[1];
	if (!panel) throw new Error(`no --ls-surface-1 for ${theme} in app.css`);
	return panel;
}
const chroma = (hex: string) => Math.hypot(...lab(linear(hex)).slice(1));
const hue = (hex: string) => {
	const [, a, b] = lab(linear(hex));
	return ((Math.atan2(b, a) * 180) / Math.PI + 360) % 360;
};

describe.each(THEMES)('heat scale, %s theme', (theme) => {
	const panel = panelOf(theme);
	// "Strength" of a cell: how far its colour stands from the panel it sits on (CIE76 ΔE*ab).
	const strength = (r: number) => deltaE(linear(heatColor(r, theme)), linear(panel));

	it('only gets stronger with severity: ΔE*ab from the panel rises at every 0.05 of r over 0 … 3', () => {
		const s = samples(0.05).map(strength);
		for (let i = 1; i < s.length; i++) expect(s[i] - s[i - 1], `r = ${samples(0.05)[i]}`).toBeGreaterThan(0);
	});

	it('never gets weaker at every 0.01 beyond 8-bit rounding (0.6 ΔE*ab, about one code step)', () => {
		const s = samples(0.01).map(strength);
		for (let i = 1; i < s.length; i++) expect(s[i] - s[i - 1], `r = ${samples(0.01)[i]}`).toBeGreaterThan(-0.6);
	});

	it('does not wash out beyond the limit: chroma never falls as r grows from 1 to 3', () => {
		const rs = samples(0.01).filter((r) => r >= HEAT_LIMIT);
		for (let i = 1; i < rs.length; i++) expect(chroma(heatColor(rs[i], theme)) - chroma(heatColor(rs[i - 1], theme)), `r = ${rs[i]}`).toBeGreaterThan(-0.5);
		expect(chroma(heatColor(HEAT_MAX, theme))).toBeGreaterThan(chroma(heatColor(HEAT_LIMIT, theme)));
	});

	it.each(VISIONS)('keeps the order in lightness alone for %s vision (L* moves away from the panel)', (_, m) => {
		// Where hue is lost, lightness must still say "worse": L* distance from the panel never shrinks.
		const P = lab(simulate(m, linear(panel)))[0];
		const d = samples(0.01).map((r) => Math.abs(lab(simulate(m, linear(heatColor(r, theme))))[0] - P));
		for (let i = 1; i < d.length; i++) expect(d[i] - d[i - 1], `r = ${samples(0.01)[i]}`).toBeGreaterThan(-0.3);
	});

	it('spans a wide range of strength (≥ 60 ΔE*ab between r = 0 and r = 3)', () => {
		expect(strength(HEAT_MAX) - strength(0)).toBeGreaterThan(60);
	});

	it.each(VISIONS)('steps clearly at the limit for %s vision', (_, m) => {
		const below = simulate(m, linear(heatColor(HEAT_LIMIT - 1e-9, theme)));
		const at = simulate(m, linear(heatColor(HEAT_LIMIT, theme)));
		const step = deltaE(below, at);
		// The largest difference between neighbours 0.01 apart anywhere else on the scale.
		let neighbour = 0;
		const rs = samples(0.01);
		for (let i = 1; i < rs.length; i++) {
			if (rs[i - 1] < HEAT_LIMIT && rs[i] >= HEAT_LIMIT) continue;
			const p = simulate(m, linear(heatColor(rs[i - 1], theme)));
			const q = simulate(m, linear(heatColor(rs[i], theme)));
			neighbour = Math.max(neighbour, deltaE(p, q));
		}
		expect(step).toBeGreaterThan(40);
		expect(step).toBeGreaterThan(20 * neighbour);
		// Lightness alone marks the limit, in the scale's direction, even where hue is lost.
		expect(DIRECTION[theme] * (lab(at)[0] - lab(below)[0])).toBeGreaterThan(7);
	});

	it('draws a quiet bucket visibly apart from the bare panel (ΔE*ab > 5)', () => {
		expect(strength(0)).toBeGreaterThan(5);
	});

	it('returns each stop colour at its ratio', () => {
		const { inControl, beyond } = HEAT_STOPS[theme];
		for (const s of [...inControl.slice(0, -1), ...beyond]) expect(heatColor(s.ratio, theme)).toBe(s.color);
		expect(inControl[0].ratio).toBe(0);
		expect(beyond[0].ratio).toBe(HEAT_LIMIT);
		expect(beyond.at(-1)!.ratio).toBe(HEAT_MAX);
	});

	it('clamps below 0 and above the saturated end, and refuses NaN', () => {
		expect(heatColor(-0.5, theme)).toBe(heatColor(0, theme));
		expect(heatColor(7, theme)).toBe(heatColor(HEAT_MAX, theme));
		expect(heatColor(Infinity, theme)).toBe(heatColor(HEAT_MAX, theme));
		expect(() => heatColor(Number.NaN, theme)).toThrow(RangeError);
	});

	it('puts a hard edge at the limit in the legend gradient', () => {
		const g = heatLegendGradient(theme);
		const { inControl, beyond } = HEAT_STOPS[theme];
		const edge = ((HEAT_LIMIT / HEAT_MAX) * 100).toFixed(2);
		expect(g).toContain(`${inControl.at(-1)!.color} ${edge}%, ${beyond[0].color} ${edge}%`);
	});
});

it('tells the same colour story in both themes: orange at the limit, crimson at three times it (hues within 12°)', () => {
	const gap = (x: number, y: number) => Math.abs(((x - y + 540) % 360) - 180);
	for (const r of [HEAT_LIMIT, 2, HEAT_MAX]) expect(gap(hue(heatColor(r, 'dark')), hue(heatColor(r, 'light'))), `r = ${r}`).toBeLessThan(12);
	for (const theme of THEMES) {
		// hue angle falls from orange (≈ 60°) towards crimson (≈ 15–25°) as r grows: never back towards yellow
		const rs = samples(0.05).filter((r) => r >= HEAT_LIMIT);
		for (let i = 1; i < rs.length; i++) expect(hue(heatColor(rs[i], theme))).toBeLessThan(hue(heatColor(rs[i - 1], theme)) + 0.5);
		expect(hue(heatColor(HEAT_LIMIT, theme))).toBeGreaterThan(45);
		expect(hue(heatColor(HEAT_MAX, theme))).toBeLessThan(30);
	}
});

it('draws an empty bucket as a pattern, not as any colour of the scale', () => {
	expect(HEAT_EMPTY_BACKGROUND).toMatch(/^repeating-linear-gradient\(/);
	for (const theme of THEMES) expect(HEAT_EMPTY_BACKGROUND).not.toContain(heatColor(0, theme));
});
