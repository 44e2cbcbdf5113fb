/**
 * The charts' and heatmap's names for Lockstep's one formatting module (display/format.ts): the same
 * date-time format, zone label and ratio format on every page, under the names these files grew up with.
 */
import { formatAge, formatAxisTime, formatClock, formatDay, formatRatio, formatTime, formatValue } from '../display/format';

/** "2026-11-23 06:45 CET" */
export const dateTime = (ms: number, zone: string): string => formatTime(ms, zone);

/** "2026-11-23 06:45:12 CET" */
export const fullTime = (ms: number, zone: string): string => formatTime(ms, zone, { seconds: true });

/** "06:45:12" */
export const clockTime = (ms: number, zone: string): string => formatClock(ms, zone, true);

/** "06:45" */
export const hourMinute = (ms: number, zone: string): string => formatClock(ms, zone);

/** "Mon 23" */
export const dayLabel = formatDay;

/** "11-23 06:45" for axes */
export const axisTime = formatAxisTime;

/** "2026-11-23 05:45 UTC": the instant in UTC, for tooltips next to a time in another zone. */
export const utcStamp = (ms: number): string => formatTime(ms, 'UTC');

export const ratio = formatRatio;
export const value = formatValue;
export const duration = formatAge;
