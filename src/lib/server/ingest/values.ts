/** Cell parsers. Each returns the value, or a reason string that names what is wrong. */

export type Parsed<T> = { ok: true; value: T } | { ok: false; reason: string };

const ZERO = /^\s*[+-]?(?:0+\.?0*|\.0+)(?:[eE][+-]?\d+)?\s*$/;

/**
 * A decimal number as written in a CSV cell: digits, an optional sign, decimal point and exponent.
 * `Number()` alone would also take '' and blanks (as 0), hex/octal/binary literals and "Infinity", so
 * those are refused here; NaN and ±Infinity are refused because no statistic can use them.
 */
export function parseNumberCell(s: string): Parsed<number> {
	const v = +s;
	if (v !== v) return { ok: false, reason: s.trim() === '' ? 'is empty' : /^\s*[+-]?nan\s*$/i.test(s) ? 'is NaN: give a number' : 'is not a number' };
	if (v === Infinity || v === -Infinity) return { ok: false, reason: 'is infinite: give a finite number' };
	if (v === 0 && !ZERO.test(s)) return { ok: false, reason: s.trim() === '' ? 'is empty' : 'is not a number' };
	if (/^\s*0[xXbBoO]/.test(s)) return { ok: false, reason: 'is not a decimal number' };
	return { ok: true, value: v };
}

// ISO 8601 / RFC 3339 date-time with a zone: 2026-11-30T06:15:00Z, 2026-11-30T07:15:00.250+01:00.
const ISO = /^(\d{4})-(\d{2})-(\d{2})[T ](\d{2}):(\d{2})(?::(\d{2})(?:[.,](\d{1,9}))?)?\s*(Z|z|[+-]\d{2}(?::?\d{2})?)?$/;

/** An ISO 8601 instant with a zone (Z or ±hh:mm), as epoch milliseconds. */
export function parseInstant(s: string): Parsed<number> {
	const t = s.trim();
	if (t === '') return { ok: false, reason: 'is empty' };
	const m = ISO.exec(t);
	if (!m) return { ok: false, reason: 'is not an ISO 8601 date-time (e.g. 2026-11-30T06:15:00Z)' };
	const [, y, mo, d, h, mi, sec = '00', frac = '', zone] = m;
	if (!zone) return { ok: false, reason: 'has no time zone: add Z (UTC) or an offset such as +01:00' };
	const Y = +y, M = +mo, D = +d, H = +h, N = +mi, S = +sec;
	const daysInMonth = new Date(Date.UTC(Y, M, 0)).getUTCDate();
	if (M < 1 || M > 12 || D < 1 || D > daysInMonth || H > 23 || N > 59 || S > 59)
		return { ok: false, reason: 'is not a valid date-time (month, day or time out of range)' };
	let offsetMin = 0;
	if (zone !== 'Z' && zone !== 'z') {
		const sign = zone[0] === '-' ? -1 : 1;
		const digits = zone.slice(1).replace(':', '');
		const oh = +digits.slice(0, 2), om = digits.length > 2 ? +digits.slice(2) : 0;
		if (oh > 18 || om > 59) return { ok: false, reason: 'has an impossible zone offset' };
		offsetMin = sign * (oh * 60 + om);
	}
	const ms = frac ? Math.round(+`0.${frac}` * 1000) : 0;
	return { ok: true, value: Date.UTC(Y, M - 1, D, H, N, S, ms) - offsetMin * 60_000 };
}

const ID = /^[A-Za-z0-9][A-Za-z0-9._:#/+-]*$/;

/** An identifier cell (wafer, lot, chamber, recipe, step): printable, no spaces, bounded length. */
export function parseId(s: string, max: number): Parsed<string> {
	const t = s.trim();
	if (t === '') return { ok: false, reason: 'is empty' };
	if (t.length > max) return { ok: false, reason: `is longer than ${max} characters` };
	if (!ID.test(t)) return { ok: false, reason: 'holds characters other than letters, digits and . _ : # / + -' };
	return { ok: true, value: t };
}

/** An optional slot number 1–100 ('' = not given). */
export function parseSlot(s: string): Parsed<number | null> {
	if (s.trim() === '') return { ok: true, value: null };
	const v = Number(s);
	if (!Number.isInteger(v) || v < 1 || v > 100) return { ok: false, reason: 'is not a slot number (a whole number 1–100)' };
	return { ok: true, value: v };
}

/** Optional RF-on seconds for the step ('' = not given), ≥ 0. */
export function parseRfOn(s: string): Parsed<number | null> {
	if (s.trim() === '') return { ok: true, value: null };
	const r = parseNumberCell(s);
	if (!r.ok) return r;
	if (r.value < 0) return { ok: false, reason: 'is negative: RF-on time is ≥ 0 s' };
	return r;
}
