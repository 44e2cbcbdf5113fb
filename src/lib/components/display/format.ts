/**
 * Lockstep's one formatting module for every page: times, ages, ratios to a limit and numbers.
 * One date-time format everywhere — "2026-11-23 06:45 CET": ISO order (no month/day ambiguity), 24 h,
 * and the zone's name after it — in the clock the user chose (their zone or UTC, see
 * src/lib/server/clock.ts). Pure functions on Intl, so the server render and the browser agree.
 * (src/lib/components/charts/format.ts re-exports these under the charts' older names.)
 */

const partsCache = new Map<string, Intl.DateTimeFormat>();
function partsFormat(timeZone: string): Intl.DateTimeFormat {
	let f = partsCache.get(timeZone);
	if (!f) {
		// en-GB: short zone names such as CET / CEST rather than GMT+1.
		f = new Intl.DateTimeFormat('en-GB', {
			timeZone,
			year: 'numeric',
			month: '2-digit',
			day: '2-digit',
			hour: '2-digit',
			minute: '2-digit',
			second: '2-digit',
			hourCycle: 'h23',
			timeZoneName: 'short'
		});
		partsCache.set(timeZone, f);
	}
	return f;
}

/** A zone name Intl accepts, or UTC (a stored zone could be stale). */
export function safeZone(timeZone: string | null | undefined): string {
	if (!timeZone) return 'UTC';
	try {
		partsFormat(timeZone);
		return timeZone;
	} catch {
		return 'UTC';
	}
}

interface WallClock {
	y: string;
	mo: string;
	d: string;
	h: string;
	mi: string;
	s: string;
	zone: string;
}

function wallClock(ms: number, timeZone: string): WallClock {
	const p = Object.fromEntries(partsFormat(safeZone(timeZone)).formatToParts(new Date(ms)).map((x) => [x.type, x.value]));
	return { y: p.year, mo: p.month, d: p.day, h: p.hour === '24' ? '00' : p.hour, mi: p.minute, s: p.second, zone: p.timeZoneName ?? '' };
}

/** "2026-11-23 06:45" in the zone, with the zone's short name unless `zone: false`. */
export function formatTime(ms: number | null | undefined, timeZone: string, opts: { zone?: boolean; seconds?: boolean } = {}): string {
	if (ms === null || ms === undefined || !Number.isFinite(ms)) return '—';
	const w = wallClock(ms, timeZone);
	const t = `${w.y}-${w.mo}-${w.d} ${w.h}:${w.mi}${opts.seconds ? `:${w.s}` : ''}`;
	return opts.zone === false ? t : `${t} ${w.zone}`;
}

/**
 * A period "2026-11-23 06:00 – 07:00 CET" (the date once when both ends fall on the same day, else
 * "2026-11-23 06:00 – 2026-11-24 06:00 CET"); the zone's name once, at the end.
 */
export function formatRange(from: number | null | undefined, to: number | null | undefined, timeZone: string): string {
	if (from === null || from === undefined || to === null || to === undefined || !Number.isFinite(from) || !Number.isFinite(to)) return '—';
	const a = wallClock(from, timeZone);
	const b = wallClock(to, timeZone);
	const start = `${a.y}-${a.mo}-${a.d} ${a.h}:${a.mi}`;
	const sameDay = a.y === b.y && a.mo === b.mo && a.d === b.d;
	const end = sameDay ? `${b.h}:${b.mi}` : `${b.y}-${b.mo}-${b.d} ${b.h}:${b.mi}`;
	return `${start} – ${end} ${b.zone}`;
}

/** The short name of the zone at that instant: "CET", "CEST", "UTC", "GMT+8". */
export function zoneAbbrev(ms: number, timeZone: string): string {
	return wallClock(ms, timeZone).zone;
}

/** "06:45", or "06:45:12" with seconds: a clock time for axes and headers that name the zone elsewhere. */
export function formatClock(ms: number, timeZone: string, seconds = false): string {
	const w = wallClock(ms, timeZone);
	return seconds ? `${w.h}:${w.mi}:${w.s}` : `${w.h}:${w.mi}`;
}

const dayCache = new Map<string, Intl.DateTimeFormat>();
/** "Mon 23": a day for column headers over a calendar. */
export function formatDay(ms: number, timeZone: string): string {
	const z = safeZone(timeZone);
	let f = dayCache.get(z);
	if (!f) dayCache.set(z, (f = new Intl.DateTimeFormat('en-GB', { timeZone: z, weekday: 'short', day: 'numeric' })));
	return f.format(ms);
}

/** "11-23 06:45": the compact form for chart axes (the axis title names the zone). */
export function formatAxisTime(ms: number, timeZone: string): string {
	const w = wallClock(ms, timeZone);
	return `${w.mo}-${w.d} ${w.h}:${w.mi}`;
}

/** The same instant in UTC, ISO 8601 ("2026-11-23T06:45:00Z"), for machine-readable attributes. */
export function formatUtc(ms: number | null | undefined): string {
	if (ms === null || ms === undefined || !Number.isFinite(ms)) return '—';
	return new Date(ms).toISOString().replace(/\.\d{3}Z$/, 'Z');
}

/** The text of a typed date-time field ("2026-11-23 06:45", read in the zone the field names). */
export function toLocalInput(ms: number, timeZone: string): string {
	const w = wallClock(ms, timeZone);
	return `${w.y}-${w.mo}-${w.d} ${w.h}:${w.mi}`;
}

/**
 * The instant that a wall-clock time "YYYY-MM-DDTHH:mm" in `timeZone` names, or null when the text is
 * not such a time. Two passes of "guess the offset, correct" settle every zone, including across a
 * daylight-saving change (a time in the spring-forward gap resolves to the instant after it).
 */
export function fromLocalInput(text: string, timeZone: string): number | null {
	const m = /^(\d{4})-(\d{2})-(\d{2})[T ](\d{2}):(\d{2})(?::(\d{2}))?$/.exec(text.trim());
	if (!m) return null;
	const [y, mo, d, h, mi, s] = m.slice(1).map((x) => Number(x ?? 0));
	if (mo < 1 || mo > 12 || d < 1 || d > 31 || h > 23 || mi > 59 || s > 59) return null;
	const wall = Date.UTC(y, mo - 1, d, h, mi, s);
	if (new Date(wall).getUTCDate() !== d) return null; // 31 February and the like
	const offsetAt = (t: number) => {
		const w = wallClock(t, timeZone);
		return Date.UTC(+w.y, +w.mo - 1, +w.d, +w.h, +w.mi, +w.s) - Math.floor(t / 1000) * 1000;
	};
	let t = wall - offsetAt(wall);
	t = wall - offsetAt(t);
	return t;
}

/** "45 min", "3 h 12 min", "2 d 4 h". */
export function formatAge(ms: number | null | undefined): string {
	if (ms === null || ms === undefined || !Number.isFinite(ms)) return '—';
	const min = Math.max(0, Math.round(ms / 60_000));
	if (min < 60) return `${min} min`;
	const h = Math.floor(min / 60);
	if (h < 48) return `${h} h ${String(min % 60).padStart(2, '0')} min`;
	return `${Math.floor(h / 24)} d ${h % 24} h`;
}

/** A statistic as a multiple of its limit: "0.84×", "12.3×", "11,090×"; "> 1000×" for an infinite ratio. */
export function formatRatio(x: number | null | undefined): string {
	if (x === Infinity) return '> 1000×';
	if (x === null || x === undefined || !Number.isFinite(x)) return '—';
	const a = Math.abs(x);
	return `${a < 10 ? x.toFixed(2) : a < 100 ? x.toFixed(1) : Math.round(x).toLocaleString('en')}×`;
}

/** A physical value with about four significant figures ("1,234", "0.0123", "2.50e+6"). */
export function formatValue(v: number | null | undefined): string {
	if (v === null || v === undefined || !Number.isFinite(v)) return '—';
	const a = Math.abs(v);
	if (a !== 0 && (a >= 1e6 || a < 1e-3)) return v.toExponential(2);
	return v.toLocaleString('en-US', { maximumSignificantDigits: 4 });
}

/** A number with `digits` significant figures, grouped thousands for large values. */
export function formatNumber(x: number | null | undefined, digits = 3): string {
	if (x === null || x === undefined || !Number.isFinite(x)) return '—';
	if (x === 0) return '0';
	const a = Math.abs(x);
	if (a >= 10 ** digits) return Math.round(x).toLocaleString('en');
	if (a < 1e-3) return x.toExponential(digits - 1);
	return Number(x.toPrecision(digits)).toLocaleString('en', { maximumSignificantDigits: digits });
}

export function formatPercent(x: number | null | undefined, decimals = 1): string {
	if (x === null || x === undefined || !Number.isFinite(x)) return '—';
	return `${(x * 100).toFixed(decimals)} %`;
}
