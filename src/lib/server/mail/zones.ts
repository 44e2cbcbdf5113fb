/**
 * Time-zone arithmetic for mail schedules. The zone rules come from the IANA database that Node's Intl
 * (ICU) ships; this file only converts between a zone's wall clock and UTC instants, which Intl does not
 * offer in that direction. (A date library would add a dependency for these two functions.)
 */
const formatters = new Map<string, Intl.DateTimeFormat>();
function formatter(tz: string): Intl.DateTimeFormat {
	let f = formatters.get(tz);
	if (!f) {
		f = new Intl.DateTimeFormat('en-US', {
			timeZone: tz,
			hourCycle: 'h23',
			year: 'numeric',
			month: 'numeric',
			day: 'numeric',
			hour: 'numeric',
			minute: 'numeric',
			second: 'numeric',
			weekday: 'short'
		});
		formatters.set(tz, f);
	}
	return f;
}

export function isTimeZone(tz: string): boolean {
	if (!tz || tz.length > 64) return false;
	try {
		formatter(tz);
		return true;
	} catch {
		return false;
	}
}

export interface WallClock {
	year: number;
	month: number; // 1–12
	day: number;
	hour: number;
	minute: number;
	second: number;
	/** 0 = Sunday … 6 = Saturday */
	weekday: number;
}

const WEEKDAYS = ['Sun', 'Mon', 'Tue', 'Wed', 'Thu', 'Fri', 'Sat'];

/** The wall clock in `tz` at instant `at`. */
export function wallClock(at: number, tz: string): WallClock {
	const parts = Object.fromEntries(formatter(tz).formatToParts(new Date(at)).map((p) => [p.type, p.value]));
	return {
		year: Number(parts.year),
		month: Number(parts.month),
		day: Number(parts.day),
		hour: Number(parts.hour),
		minute: Number(parts.minute),
		second: Number(parts.second),
		weekday: WEEKDAYS.indexOf(parts.weekday)
	};
}

/** The zone's offset from UTC at instant `at`, in ms (Vienna in winter: +3,600,000). */
export function offsetAt(at: number, tz: string): number {
	const w = wallClock(at, tz);
	const asUtc = Date.UTC(w.year, w.month - 1, w.day, w.hour, w.minute, w.second);
	return asUtc - Math.floor(at / 1000) * 1000; // the formatter shows whole seconds
}

/**
 * The instant at which the wall clock in `tz` reads the given date and time. Two passes of the offset
 * settle it, DST included. A time skipped by a spring-forward gap maps to the instant just after the gap
 * (06:30 is never in a gap in any zone today, but a user may pick 02:30); a time repeated in autumn maps to
 * its first occurrence.
 */
export function zonedInstant(year: number, month: number, day: number, hour: number, minute: number, tz: string): number {
	const naive = Date.UTC(year, month - 1, day, hour, minute);
	let at = naive - offsetAt(naive, tz);
	at = naive - offsetAt(at, tz);
	const check = wallClock(at, tz);
	if (check.hour !== hour || check.minute !== minute) {
		// In a gap: the earlier offset gives the instant after the jump.
		const before = naive - offsetAt(naive - 86_400_000, tz);
		const after = naive - offsetAt(naive + 86_400_000, tz);
		at = Math.max(before, after);
	} else {
		// In an overlap, prefer the first occurrence.
		const earlier = at - 3_600_000;
		const e = wallClock(earlier, tz);
		if (e.hour === hour && e.minute === minute) at = earlier;
	}
	return at;
}

/** Parse "HH:MM" (24 h); null when malformed. */
export function parseClockTime(s: string): { hour: number; minute: number } | null {
	const m = /^([01]\d|2[0-3]):([0-5]\d)$/.exec(s.trim());
	return m ? { hour: Number(m[1]), minute: Number(m[2]) } : null;
}

/**
 * The latest instant ≤ `at` at which the wall clock in `tz` read `time` ("06:30"); with `weekday`
 * (0 = Sunday … 6 = Saturday) only that day of the week counts.
 */
export function latestScheduled(at: number, tz: string, time: string, weekday?: number): number {
	const t = parseClockTime(time);
	if (!t) throw new Error(`"${time}" is not a HH:MM time`);
	const today = wallClock(at, tz);
	// Walk back day by day over the local calendar (at most 8 days for a weekly schedule).
	for (let back = 0; back <= 8; back++) {
		const d = new Date(Date.UTC(today.year, today.month - 1, today.day - back));
		if (weekday !== undefined && d.getUTCDay() !== weekday) continue;
		const inst = zonedInstant(d.getUTCFullYear(), d.getUTCMonth() + 1, d.getUTCDate(), t.hour, t.minute, tz);
		if (inst <= at) return inst;
	}
	throw new Error('no scheduled instant found'); // unreachable for valid input
}

/** "Tue 14 Apr 2026, 06:30 CEST"-style text in `tz`. */
export function formatInZone(at: number, tz: string, opts: Intl.DateTimeFormatOptions = { dateStyle: 'medium', timeStyle: 'short' }): string {
	return new Intl.DateTimeFormat('en-GB', { timeZone: tz, ...opts }).format(new Date(at));
}
