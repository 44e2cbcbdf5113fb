/** The clock, in one place so tests can move it. All instants are epoch milliseconds UTC. */
let offsetMs = 0;
export function now(): number {
	return Date.now() + offsetMs;
}
export function setClockOffsetForTests(ms: number): void {
	offsetMs = ms;
}
