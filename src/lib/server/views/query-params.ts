/** Query-string values shared by the JSON APIs of the fleet and chamber screens. */
import { z } from 'zod';

export const INSTANT_MESSAGE = 'must be an ISO 8601 time or epoch milliseconds, from 1970 to 9999';

/** 9999-12-31T23:59:59.999Z */
const MAX_INSTANT = 253_402_300_799_999;

/** An instant given as epoch milliseconds or ISO 8601; null when absent or empty, 'bad' otherwise. */
export function parseInstant(s: string | null | undefined): number | null | 'bad' {
	if (s === undefined || s === null || s === '') return null;
	const t = /^\d+$/.test(s) ? Number(s) : Date.parse(s);
	// 1970 to the end of 9999: beyond that a Date cannot be formatted (toISOString throws: a 500)
	return Number.isFinite(t) && t >= 0 && t <= MAX_INSTANT ? t : 'bad';
}

/** The same as a zod field: optional, null when empty, a located issue when unreadable. */
export const optionalInstant = z
	.string()
	.optional()
	.transform((s, ctx) => {
		const t = parseInstant(s);
		if (t === 'bad') {
			ctx.addIssue({ code: 'custom', message: INSTANT_MESSAGE });
			return z.NEVER;
		}
		return t;
	});

/** A query string with its parameters in a fixed order, so that equal queries give one cache key. */
export function canonicalQuery(sp: URLSearchParams): string {
	const pairs = [...sp.entries()].sort(([a, x], [b, y]) => (a === b ? (x < y ? -1 : x > y ? 1 : 0) : a < b ? -1 : 1));
	return new URLSearchParams(pairs).toString();
}
