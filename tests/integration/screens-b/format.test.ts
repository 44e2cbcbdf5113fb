import { describe, expect, it } from 'vitest';
import { formatAge, formatNumber, formatRatio, formatTime, fromLocalInput, toLocalInput } from '../../../src/lib/components/display/format.ts';

describe('time formatting in the user zone', () => {
	// Offsets from the IANA tz database (2024b): Europe/Berlin is UTC+1 in winter, UTC+2 in summer,
	// switching on the last Sunday of March at 01:00 UTC; America/Phoenix is UTC−7 all year.
	it('shows the wall clock of the zone', () => {
		const t = Date.UTC(2026, 10, 23, 5, 45);
		expect(formatTime(t, 'Europe/Berlin', { zone: false })).toBe('2026-11-23 06:45');
		expect(formatTime(t, 'America/Phoenix', { zone: false })).toBe('2026-11-22 22:45');
		expect(formatTime(t, 'UTC')).toBe('2026-11-23 05:45 UTC');
		expect(formatTime(null, 'UTC')).toBe('—');
	});

	it('reads a wall-clock input back to the instant, across a daylight-saving change', () => {
		expect(fromLocalInput('2026-11-23T06:45', 'Europe/Berlin')).toBe(Date.UTC(2026, 10, 23, 5, 45));
		expect(fromLocalInput('2026-07-01T12:00', 'Europe/Berlin')).toBe(Date.UTC(2026, 6, 1, 10, 0));
		// 2026-03-29 is the last Sunday of March: 03:30 local is already summer time (UTC+2).
		expect(fromLocalInput('2026-03-29T03:30', 'Europe/Berlin')).toBe(Date.UTC(2026, 2, 29, 1, 30));
		expect(fromLocalInput('2026-02-31T10:00', 'UTC')).toBeNull();
		expect(fromLocalInput('yesterday', 'UTC')).toBeNull();
		const t = Date.UTC(2026, 0, 5, 23, 10);
		expect(fromLocalInput(toLocalInput(t, 'Asia/Tokyo'), 'Asia/Tokyo')).toBe(t);
	});
});

describe('numbers', () => {
	it('formats ages, ratios and significant figures', () => {
		expect(formatAge(45 * 60_000)).toBe('45 min');
		expect(formatAge((3 * 60 + 5) * 60_000)).toBe('3 h 05 min');
		expect(formatAge(50 * 3_600_000)).toBe('2 d 2 h');
		expect(formatRatio(0.8449)).toBe('0.84×');
		expect(formatRatio(12.34)).toBe('12.3×');
		expect(formatNumber(12345.6, 3)).toBe('12,346');
		expect(formatNumber(0.012345, 3)).toBe('0.0123');
		expect(formatNumber(Number.NaN)).toBe('—');
	});
});
