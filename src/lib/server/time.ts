/**
 * The clock, in one place. All instants are epoch milliseconds UTC. The demo replay and tests move it
 * (so that what the demo's engineers did carries the demo's times); production never does.
 */
let offsetMs = 0;
export function now(): number {
	return Date.now() + offsetMs;
}
/** Make `now()` read `at` from here on (demo replay, tests). */
export function setClock(at: number | null): void {
	offsetMs = at === null ? 0 : at - Date.now();
}

/** @deprecated kept for tests written against the first clock API: shift `now()` by `ms`. */
export function setClockOffsetForTests(ms: number): void {
	offsetMs = ms;
}
