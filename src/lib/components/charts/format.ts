/**
 * Formatting of times and numbers for the screens: times in a given IANA zone (the user's, or UTC),
 * ratios to the limit with two decimals, counts with thousands separators.
 */

const cache = new Map<string, Intl.DateTimeFormat>();

function fmt(zone: string, opts: Intl.DateTimeFormatOptions): Intl.DateTimeFormat {
	const key = zone + JSON.stringify(opts);
	let f = cache.get(key);
	if (!f) {
		try {
			f = new Intl.DateTimeFormat('en-GB', { ...opts, timeZone: zone });
		} catch {
			f = new Intl.DateTimeFormat('en-GB', { ...opts, timeZone: 'UTC' });
		}
		cache.set(key, f);
	}
	return f;
}

/** "23 Nov 06:45" */
export function dateTime(ms: number, zone: string): string {
	return fmt(zone, { day: 'numeric', month: 'short', hour: '2-digit', minute: '2-digit', hourCycle: 'h23' }).format(ms);
}

/** "23 Nov 2026, 06:45:12" */
export function fullTime(ms: number, zone: string): string {
	return fmt(zone, { day: 'numeric', month: 'short', year: 'numeric', hour: '2-digit', minute: '2-digit', second: '2-digit', hourCycle: 'h23' }).format(ms);
}

/** "06:45:12" */
export function clockTime(ms: number, zone: string): string {
	return fmt(zone, { hour: '2-digit', minute: '2-digit', second: '2-digit', hourCycle: 'h23' }).format(ms);
}

/** "06:45" */
export function hourMinute(ms: number, zone: string): string {
	return fmt(zone, { hour: '2-digit', minute: '2-digit', hourCycle: 'h23' }).format(ms);
}

/** "Mon 23" */
export function dayLabel(ms: number, zone: string): string {
	return fmt(zone, { weekday: 'short', day: 'numeric' }).format(ms);
}

/** "2026-11-23 05:45Z": the instant in UTC, for tooltips next to a local time. */
export function utcStamp(ms: number): string {
	return new Date(ms).toISOString().slice(0, 16).replace('T', ' ') + 'Z';
}

/** A ratio to a limit, "1.84×"; "—" when absent. */
export function ratio(r: number | null | undefined): string {
	if (r === null || r === undefined || !Number.isFinite(r)) return r === Infinity ? '> 1000×' : '—';
	return `${r < 10 ? r.toFixed(2) : r < 100 ? r.toFixed(1) : Math.round(r).toString()}×`;
}

/** A physical value with about four significant figures. */
export function value(v: number | null | undefined): string {
	if (v === null || v === undefined || !Number.isFinite(v)) return '—';
	const a = Math.abs(v);
	if (a !== 0 && (a >= 1e6 || a < 1e-3)) return v.toExponential(2);
	return v.toLocaleString('en-US', { maximumSignificantDigits: 4 });
}

/** "3 h 20 min", "2 d 4 h", "12 min" */
export function duration(ms: number): string {
	const min = Math.max(0, Math.round(ms / 60_000));
	if (min < 60) return `${min} min`;
	const h = Math.floor(min / 60);
	if (h < 48) return `${h} h${min % 60 ? ` ${min % 60} min` : ''}`;
	const d = Math.floor(h / 24);
	return `${d} d${h % 24 ? ` ${h % 24} h` : ''}`;
}
