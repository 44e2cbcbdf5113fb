/**
 * Which clock every page shows: the user's own zone (account setting, the plant's zone for the demo
 * people) or UTC. One choice, kept in a cookie so that the server renders and the browser agree, and
 * so that server-side work that depends on the zone (the heatmap's day buckets, parsing a typed time)
 * uses the same clock as the page the user reads.
 */
import type { Cookies } from '@sveltejs/kit';
import { safeZone } from '$lib/components/display/format';

export const CLOCK_COOKIE = 'ls_clock';

export interface ClockChoice {
	/** true when the user chose UTC */
	utc: boolean;
	/** the user's own zone (IANA name) */
	userZone: string;
	/** the zone every time on the page is shown and read in */
	zone: string;
}

export function clockChoice(cookies: Pick<Cookies, 'get'>, user: { timeZone: string } | null | undefined): ClockChoice {
	const userZone = safeZone(user?.timeZone);
	const utc = cookies.get(CLOCK_COOKIE) === 'utc' || userZone === 'UTC';
	return { utc, userZone, zone: utc ? 'UTC' : userZone };
}

/** The zone to show and read times in for this request. */
export function clockZone(cookies: Pick<Cookies, 'get'>, user: { timeZone: string } | null | undefined): string {
	return clockChoice(cookies, user).zone;
}
