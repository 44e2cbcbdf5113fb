/**
 * Which clock the screens show: the signed-in user's own time zone (their account setting), or UTC
 * when they switch to it — one choice for every chart, table and tooltip, remembered in the browser.
 */
const KEY = 'ls_clock_utc';

export const clock = $state({ utc: false });

/** Read the remembered choice (browser only; storage may be refused). */
export function loadClockChoice(): void {
	try {
		clock.utc = localStorage.getItem(KEY) === '1';
	} catch {
		clock.utc = false;
	}
}

export function setUtc(utc: boolean): void {
	clock.utc = utc;
	try {
		localStorage.setItem(KEY, utc ? '1' : '0');
	} catch {
		// storage refused: the choice holds for this page only
	}
}

/** The zone to format times in: UTC when chosen, else the user's zone. */
export function activeZone(userZone: string | null | undefined): string {
	return clock.utc ? 'UTC' : userZone || 'UTC';
}
