/**
 * Formatting shared by the alarm, baseline, maintenance, fleet and admin screens: times in the user's
 * zone (with UTC one hover away), ages, ratios to a limit and plain numbers with sensible precision.
 * Pure functions on Intl, so the server render and the browser agree.
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

/** The same instant in UTC, ISO 8601 ("2026-11-23T06:45:00Z"). */
export function formatUtc(ms: number | null | undefined): string {
	if (ms === null || ms === undefined || !Number.isFinite(ms)) return '—';
	return new Date(ms).toISOString().replace(/\.\d{3}Z$/, 'Z');
}

/** A value for <input type="datetime-local"> showing the instant in the zone. */
export function toLocalInput(ms: number, timeZone: string): string {
	const w = wallClock(ms, timeZone);
	return `${w.y}-${w.mo}-${w.d}T${w.h}:${w.mi}`;
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

/** A statistic as a multiple of its limit: "0.84×", "12.3×". */
export function formatRatio(x: number | null | undefined): string {
	if (x === null || x === undefined || !Number.isFinite(x)) return '—';
	return `${Math.abs(x) >= 10 ? x.toFixed(1) : x.toFixed(2)}×`;
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
