import { linearRegression } from 'simple-statistics';
import type { EwmaChart } from './ewma';
import { tTwoSided } from './quantiles';

/** Options of {@link forecastCrossing}. */
export interface ForecastOptions {
	/** Last values used for the trend (default 30). */
	window?: number;
	/** Two-sided confidence of the slope interval (default 0.9). */
	confidence?: number;
	/** Look no further ahead than this many wafers (default 10,000). */
	horizon?: number;
}

/** When, if the recent trend went on, the EWMA would cross its upper limit. */
export interface CrossingForecast {
	/** Trend slope per wafer, and its standard error. */
	slope: number;
	slopeSe: number;
	/** Wafers from the last one until the crossing on the fitted trend; 0 if already above; null if the trend does not reach the limit within the horizon. */
	wafers: number | null;
	/** Crossing range from the slope's confidence interval: earliest (steepest slope) and latest (null = not within the horizon). */
	earliest: number | null;
	latest: number | null;
	confidence: number;
	/** Values the trend was fitted on. */
	window: number;
	/** The limit used: the chart's steady-state upper limit. */
	limit: number;
}

function crossing(
	z0: number,
	last: number,
	a: number,
	b: number,
	lambda: number,
	limit: number,
	horizon: number
): number | null {
	let z = z0;
	for (let h = 1; h <= horizon; h++) {
		z = lambda * (a + b * (last + h)) + (1 - lambda) * z;
		if (z > limit) return h;
	}
	return null;
}

/**
 * Forecast of the number of wafers until an EWMA crosses its upper limit, with an uncertainty range.
 * An estimate from the recent trend, never a promise: drift may stop, speed up or reverse.
 *
 * Method: fit x_i = a + b·i by least squares (simple-statistics `linearRegression`) to the last
 * `window` raw values; s² = Σ r_i² / (w − 2), se(b) = s / √Σ(i − ī)²; project the EWMA forward,
 * z_{N+h} = λ (a + b (N + h)) + (1 − λ) z_{N+h−1}, and report the first h with z above the
 * steady-state limit. The range repeats this with b ± t_{w−2} · se(b), the line pivoting on the
 * window's centroid (the intercept's own uncertainty is not added). The residuals are assumed
 * independent; drift with autocorrelated noise makes the range too narrow.
 * Source: least squares and the slope's t interval, Draper & Smith (1998) "Applied Regression
 * Analysis", 3rd ed., §1.4; EWMA recursion, Roberts (1959) Technometrics 1:239.
 *
 * @param series raw values in time order (the series the chart was computed on)
 * @param chart the EWMA chart of `series` ({@link ewma})
 * @param options window, confidence, horizon
 * @returns the forecast
 * @throws RangeError if the series and chart lengths differ, or fewer than 3 values are available
 * @example forecastCrossing(ratios, ewma(ratios)).wafers // → e.g. 42, or null with no upward trend
 */
export function forecastCrossing(
	series: ArrayLike<number>,
	chart: EwmaChart,
	options: ForecastOptions = {}
): CrossingForecast {
	const n = series.length;
	if (chart.values.length !== n) throw new RangeError('series and chart lengths differ');
	const window = Math.min(options.window ?? 30, n);
	const confidence = options.confidence ?? 0.9;
	const horizon = options.horizon ?? 10_000;
	if (window < 3) throw new RangeError('a trend needs at least 3 values');
	if (!(confidence > 0 && confidence < 1)) throw new RangeError('confidence must lie in (0, 1)');
	const pts: [number, number][] = [];
	for (let i = n - window; i < n; i++) pts.push([i, series[i]]);
	const { m: b, b: a } = linearRegression(pts);
	let xbar = 0;
	let ybar = 0;
	for (const [x, y] of pts) {
		xbar += x / window;
		ybar += y / window;
	}
	let sxx = 0;
	let sse = 0;
	for (const [x, y] of pts) {
		sxx += (x - xbar) ** 2;
		sse += (y - (a + b * x)) ** 2;
	}
	const slopeSe = Math.sqrt(sse / (window - 2) / sxx);
	const limit = chart.upperAsymptote;
	const zLast = chart.values[n - 1];
	const lastIndex = n - 1;
	const base = { slope: b, slopeSe, confidence, window, limit };
	if (zLast > limit) return { ...base, wafers: 0, earliest: 0, latest: 0 };
	const tq = tTwoSided(1 - confidence, window - 2);
	const at = (slope: number) =>
		crossing(zLast, lastIndex, ybar - slope * xbar, slope, chart.lambda, limit, horizon);
	return { ...base, wafers: at(b), earliest: at(b + tq * slopeSe), latest: at(b - tq * slopeSe) };
}
