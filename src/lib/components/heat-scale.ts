/**
 * Lockstep's heat scale for the fleet heatmap: one colour per time bucket from the ratio
 * r = statistic ÷ control limit (the worst of T²/limit and Q/limit in the bucket).
 *
 * Design (Lockstep's own stops, not a named scientific colormap and not a traffic light):
 * - 0 ≤ r < 1, in control: a calm blue-slate ramp that starts just above the panel colour, so a
 *   quiet chamber recedes and a chamber creeping towards its limit slowly stands out.
 * - r = 1, the limit: a hard step in hue (blue → burnt orange) and in lightness, so "at the limit"
 *   never blends into "nearly at the limit".
 * - 1 ≤ r ≤ 3, beyond: the same story in both themes — burnt orange at the limit turning to a hot
 *   crimson at three times it, with chroma rising all the way (never washing out to a pale tint,
 *   which reads as "milder" however bright it is). r ≥ 3 is clamped: past three times the limit every
 *   bucket is equally urgent.
 * "Stronger" is measured as the colour difference from the panel the cell sits on (CIE76 ΔE*ab):
 * it rises with r over the whole scale in both themes. Lightness moves away from the panel too
 * (lighter on the dark theme, darker on the light one), so the order survives where hue is lost.
 *
 * How this was checked (tests/unit/ui/heat-scale.test.ts repeats it on every run):
 * - ΔE*ab from the theme's panel colour (--ls-surface-1 in app.css), CIELAB per CIE 15:2004 (D65,
 *   sRGB decoded per IEC 61966-2-1:1999), sampled every 0.05 of r, rises strictly in both themes;
 *   chroma never falls beyond the limit; the hue at the limit and at the top agree across themes.
 * - Protanopia, deuteranopia and tritanopia simulated with the severity-1.0 matrices of Machado,
 *   Oliveira & Fernandes (2009), "A physiologically-based model for simulation of color vision
 *   deficiency", IEEE TVCG 15(6), in linear RGB: the L* distance from the panel never shrinks as r
 *   grows, and the step at the limit stays a large colour difference with an L* jump ≥ 7 units.
 *
 * Colour maths is written here rather than taken from a colour library: Lockstep needs only
 * sRGB ↔ CIELAB (two published formulas, ~40 lines) and the heatmap calls it for thousands of cells.
 */

export type HeatTheme = 'dark' | 'light';

export interface HeatStop {
	/** statistic ÷ limit at which this colour applies */
	ratio: number;
	/** sRGB hex */
	color: string;
}

export interface HeatRamp {
	/** 0 ≤ r < 1, ascending ratio; the last stop is approached but not reached */
	inControl: readonly HeatStop[];
	/** 1 ≤ r ≤ HEAT_MAX, ascending ratio; starts exactly at the limit */
	beyond: readonly HeatStop[];
}

/** The control limit on the ratio scale. */
export const HEAT_LIMIT = 1;
/** Ratios above this are drawn as this (the scale's saturated end). */
export const HEAT_MAX = 3;

export const HEAT_STOPS: Readonly<Record<HeatTheme, HeatRamp>> = {
	dark: {
		inControl: [
			{ ratio: 0, color: '#1c2937' },
			{ ratio: 0.5, color: '#25415c' },
			{ ratio: 1, color: '#2d5376' }
		],
		beyond: [
			{ ratio: 1, color: '#b06c2d' },
			{ ratio: 3, color: '#fb5473' }
		]
	},
	light: {
		inControl: [
			{ ratio: 0, color: '#e8eef4' },
			{ ratio: 0.5, color: '#c2d4e5' },
			{ ratio: 1, color: '#9fbfdb' }
		],
		beyond: [
			{ ratio: 1, color: '#dc8244' },
			{ ratio: 1.6, color: '#d05a3b' },
			{ ratio: 2.2, color: '#ba3336' },
			{ ratio: 3, color: '#9f002d' }
		]
	}
};

/**
 * CSS `background` for a bucket with no wafers: diagonal hatching in the muted ink colour over
 * the panel, so "nothing ran" reads differently from "ran and was quiet" (which is a solid fill).
 */
export const HEAT_EMPTY_BACKGROUND =
	'repeating-linear-gradient(135deg, transparent 0 3px, color-mix(in oklab, var(--ls-ink-3) 45%, transparent) 3px 4.5px), var(--ls-surface-1)';

/**
 * The heatmap colour for a ratio r = statistic ÷ control limit.
 * Interpolates between HEAT_STOPS in CIELAB, so lightness changes linearly between stops.
 * @param ratio r ≥ 0; negative values are drawn as 0, values above HEAT_MAX (and +Infinity) as HEAT_MAX
 * @param theme the page theme the cell is drawn on
 * @returns sRGB hex colour, e.g. `heatColor(0, 'dark')` → '#1c2937'
 * @throws RangeError when ratio is NaN (a bucket without a statistic is an empty bucket: use
 *   HEAT_EMPTY_BACKGROUND)
 */
export function heatColor(ratio: number, theme: HeatTheme): string {
	if (Number.isNaN(ratio)) throw new RangeError('heatColor: ratio is NaN; draw an empty bucket instead');
	const r = Math.min(Math.max(ratio, 0), HEAT_MAX);
	const ramp = HEAT_STOPS[theme];
	const stops = r < HEAT_LIMIT ? ramp.inControl : ramp.beyond;
	let i = 0;
	while (i < stops.length - 2 && r > stops[i + 1].ratio) i++;
	const a = stops[i];
	const b = stops[i + 1];
	const t = Math.min(Math.max((r - a.ratio) / (b.ratio - a.ratio), 0), 1);
	// Interpolated in LCh (lightness, chroma, hue) rather than straight across L*a*b*: a straight line
	// between an orange and a crimson cuts inside the hue circle and dulls the colours between stops,
	// which would make a worse bucket look weaker than a better one.
	const [La, Ca, ha] = toLch(hexToLab(a.color));
	const [Lb, Cb, hb] = toLch(hexToLab(b.color));
	let dh = hb - ha;
	if (dh > 180) dh -= 360;
	if (dh < -180) dh += 360;
	const L = La + (Lb - La) * t;
	const C = Ca + (Cb - Ca) * t;
	const h = ((ha + dh * t) * Math.PI) / 180;
	return labToHex([L, C * Math.cos(h), C * Math.sin(h)]);
}

/**
 * Text colour that reads on a heat cell (for a number printed inside it): dark ink on light cells,
 * light ink on dark ones, split at CIELAB L* = 60.
 */
export function heatInk(ratio: number, theme: HeatTheme): string {
	return hexToLab(heatColor(ratio, theme))[0] > 60 ? '#10151b' : '#f4f7fa';
}

/**
 * A CSS linear-gradient for a legend bar running from r = 0 (left) to HEAT_MAX (right), with a hard
 * edge at the limit. Mark the limit with a tick at `${(HEAT_LIMIT / HEAT_MAX) * 100}%`.
 */
export function heatLegendGradient(theme: HeatTheme): string {
	const ramp = HEAT_STOPS[theme];
	const at = (s: HeatStop) => `${s.color} ${((s.ratio / HEAT_MAX) * 100).toFixed(2)}%`;
	return `linear-gradient(to right, ${[...ramp.inControl, ...ramp.beyond].map(at).join(', ')})`;
}

// --- sRGB ↔ CIELAB (D65) -------------------------------------------------------------------------
// sRGB transfer function and matrix: IEC 61966-2-1:1999; L*a*b*: CIE 15:2004 §8.2.1.

type Lab = [number, number, number];
const WHITE = [0.95047, 1, 1.08883];
const EPS = (6 / 29) ** 3;

function hexToLab(hex: string): Lab {
	const [r, g, b] = [1, 3, 5].map((i) => decode(parseInt(hex.slice(i, i + 2), 16) / 255));
	const xyz = [
		0.4124 * r + 0.3576 * g + 0.1805 * b,
		0.2126 * r + 0.7152 * g + 0.0722 * b,
		0.0193 * r + 0.1192 * g + 0.9505 * b
	].map((v, k) => v / WHITE[k]);
	const [fx, fy, fz] = xyz.map((t) => (t > EPS ? Math.cbrt(t) : t / (3 * (6 / 29) ** 2) + 4 / 29));
	return [116 * fy - 16, 500 * (fx - fy), 200 * (fy - fz)];
}

function toLch([L, a, b]: Lab): Lab {
	return [L, Math.hypot(a, b), (Math.atan2(b, a) * 180) / Math.PI];
}

function labToHex([L, a, b]: Lab): string {
	const fy = (L + 16) / 116;
	const inv = (f: number) => (f > 6 / 29 ? f ** 3 : 3 * (6 / 29) ** 2 * (f - 4 / 29));
	const [x, y, z] = [inv(fy + a / 500), inv(fy), inv(fy - b / 200)].map((v, k) => v * WHITE[k]);
	const rgb = [
		3.2406 * x - 1.5372 * y - 0.4986 * z,
		-0.9689 * x + 1.8758 * y + 0.0415 * z,
		0.0557 * x - 0.204 * y + 1.057 * z
	];
	return (
		'#' +
		rgb
			.map((c) =>
				Math.round(encode(c) * 255)
					.toString(16)
					.padStart(2, '0')
			)
			.join('')
	);
}

function decode(c: number): number {
	return c <= 0.04045 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4;
}

function encode(c: number): number {
	const v = Math.min(Math.max(c, 0), 1);
	return v <= 0.0031308 ? 12.92 * v : 1.055 * v ** (1 / 2.4) - 0.055;
}
