/**
 * Time buckets of the fleet heatmap: which windows exist, how wide a column is, and where the columns'
 * edges fall. Pure functions (no I/O) so the edges can be tested on their own.
 */

export const HOUR_MS = 3_600_000;
export const DAY_MS = 86_400_000;

export const HEAT_WINDOWS = {
	'24h': { label: '24 hours', buckets: 24, bucketMs: HOUR_MS },
	'7d': { label: '7 days', buckets: 42, bucketMs: 4 * HOUR_MS },
	'30d': { label: '30 days', buckets: 30, bucketMs: DAY_MS }
} as const;
export type HeatWindow = keyof typeof HEAT_WINDOWS;

export function isHeatWindow(x: unknown): x is HeatWindow {
	return typeof x === 'string' && Object.hasOwn(HEAT_WINDOWS, x);
}

/**
 * The start of the local calendar day that contains `at`, in `timeZone`, floored to a whole UTC hour
 * (the rollups are hourly in UTC, so a zone with a half-hour offset gets its day edge at the hour
 * before local midnight). Across a daylight-saving change a "day" column is 23 or 25 local hours
 * wide at its edges; the columns stay 24 h wide, which keeps every column comparable.
 */
export function localDayStart(at: number, timeZone: string): number {
	let parts: Intl.DateTimeFormatPart[];
	try {
		parts = new Intl.DateTimeFormat('en-GB', { timeZone, hour: 'numeric', minute: 'numeric', second: 'numeric', hourCycle: 'h23' }).formatToParts(at);
	} catch {
		parts = new Intl.DateTimeFormat('en-GB', { timeZone: 'UTC', hour: 'numeric', minute: 'numeric', second: 'numeric', hourCycle: 'h23' }).formatToParts(at);
	}
	const get = (t: string) => Number(parts.find((p) => p.type === t)?.value ?? 0);
	const sinceMidnight = ((get('hour') * 60 + get('minute')) * 60 + get('second')) * 1000 + (at % 1000);
	return Math.floor((at - sinceMidnight) / HOUR_MS) * HOUR_MS;
}

export interface BucketPlan {
	window: HeatWindow;
	bucketMs: number;
	/** first column's start (inclusive) */
	from: number;
	/** last column's end (exclusive); the last column contains `end` */
	to: number;
	/** column starts, oldest first */
	starts: number[];
}

/**
 * The columns of a window that ends at `end`: whole buckets aligned on the local day (hour buckets on
 * the hour), the last one containing `end` (so "now" is always in the rightmost column).
 *
 * @example planBuckets('24h', Date.UTC(2026, 0, 1, 6, 30), 'UTC').starts.length // → 24, the last at 06:00
 */
export function planBuckets(window: HeatWindow, end: number, timeZone: string): BucketPlan {
	const { buckets, bucketMs } = HEAT_WINDOWS[window];
	const origin = bucketMs === HOUR_MS ? Math.floor(end / HOUR_MS) * HOUR_MS : localDayStart(end, timeZone);
	const to = origin + (Math.floor((end - origin) / bucketMs) + 1) * bucketMs;
	const from = to - buckets * bucketMs;
	return { window, bucketMs, from, to, starts: Array.from({ length: buckets }, (_, i) => from + i * bucketMs) };
}
