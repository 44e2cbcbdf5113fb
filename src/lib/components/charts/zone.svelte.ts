/**
 * Which clock the screens show: the signed-in user's own time zone (their account setting), or UTC —
 * one choice for every page, table, chart, tooltip and typed time. The choice lives in a cookie (see
 * src/lib/server/clock.ts) so the server renders in the same clock; the root layout hands the zone to
 * every page as `data.zone`.
 */
import { invalidateAll } from '$app/navigation';
import { page } from '$app/state';

const COOKIE = 'ls_clock';

/** The zone to format times in on this page (from the root layout's data). */
export function activeZone(): string {
	return (page.data as { zone?: string }).zone ?? 'UTC';
}

/** Switch every page to UTC (true) or the user's zone (false), and reload the data in that clock. */
export async function setUtc(utc: boolean): Promise<void> {
	document.cookie = `${COOKIE}=${utc ? 'utc' : 'local'}; path=/; max-age=${400 * 86_400}; samesite=lax`;
	await invalidateAll();
}
