/**
 * Lockstep's heat scale for the fleet heatmap: one colour per time bucket from the ratio
 * r = statistic ÷ control limit (the worst of T²/limit and Q/limit in the bucket).
 *
 * Design (Lockstep's own stops, not a named scientific colormap and not a traffic light):
 * - 0 ≤ r < 1, in control: a calm blue-slate ramp that starts just above the panel colour, so a
 *   quiet chamber recedes and a chamber creeping towards its limit slowly brightens (dark theme)
 *   or darkens (light theme).
 * - r = 1, the limit: a hard step in hue (blue → vermilion) and in lightness (at least 12 L* units),
 *   so "at the limit" never blends into "nearly at the limit".
 * - 1 ≤ r ≤ 3, beyond: one warm hue family escalating in lightness — towards a glowing peach-white
 *   on the dark control-room theme, towards a deep oxblood on the light office theme. r ≥ 3 is
 *   clamped: past three times the limit every bucket is equally urgent.
 * Lightness runs one way over the whole scale in each theme, so the order survives in greyscale and
 * for every kind of colour vision; hue only adds the in/out-of-control split.
 *
 * How colour-blind safety was checked (tests/unit/ui/heat-scale.test.ts repeats it on every run):
 * - CIELAB L* (CIE 15:2004, D65, sRGB decoded per IEC 61966-2-1:1999) sampled every 0.01 of r is
 *   strictly monotonic across the whole scale, in both themes.
 * - The step at the limit was simulated for protanopia, deuteranopia and tritanopia with the
 *   severity-1.0 matrices of Machado, Oliveira & Fernandes (2009), "A physiologically-based model
 *   for simulation of color vision deficiency", IEEE TVCG 15(6), applied in linear RGB; the colour
 *   difference (CIE76 ΔE*ab) across the step stays far above the difference between neighbouring
 *   samples inside either ramp, for every simulated vision, and its L* jump stays ≥ 7 units under
 *   every simulation (so the limit shows even where the hue change is lost).
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
			{ ratio: 1, color: '#35638a' }
		],
		beyond: [
			{ ratio: 1, color: '#e2653a' },
			{ ratio: 1.6, color: '#f08a40' },
			{ ratio: 2.2, color: '#f9b072' },
			{ ratio: 3, color: '#ffe3cc' }
		]
	},
	light: {
		inControl: [
			{ ratio: 0, color: '#e8eef4' },
			{ ratio: 0.5, color: '#c2d4e5' },
			{ ratio: 1, color: '#8caecf' }
		],
		beyond: [
			{ ratio: 1, color: '#de6430' },
			{ ratio: 1.6, color: '#bf4325' },
			{ ratio: 2.2, color: '#952a22' },
			{ ratio: 3, color: '#561426' }
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
	const la = hexToLab(a.color);
	const lb = hexToLab(b.color);
	return labToHex([0, 1, 2].map((k) => la[k] + (lb[k] - la[k]) * t) as Lab);
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
