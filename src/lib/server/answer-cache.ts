/**
 * Computed JSON answers of the read-only APIs (heatmap, chamber series and wafer table, wafer
 * drill-down), kept while the database is unchanged. Every open landing page polls the heatmap, and at
 * the start of a shift many engineers open the same chambers and wafers: the same few answers are asked
 * for many times a second, and each costs milliseconds of queries and arithmetic.
 * LOCKSTEP_ANSWER_CACHE=off turns it off (the benches do, to time the computation itself).
 *
 * An answer is served from here only while (a) the data version it was computed at is still the
 * current one and (b) it is younger than the caller's `maxAgeMs` (for answers that also depend on the
 * clock, e.g. a window anchored at "now").
 *
 * The data version (see `dataVersion`):
 * - SQLite: `PRAGMA data_version`, which changes whenever another connection — the inbox job, another
 *   server process, a script — commits to the database file (SQLite documentation, "PRAGMA
 *   data_version"), plus a counter of this process's own writes (`noteLocalWrite`, called after every
 *   non-GET request: the pragma does not change for the connection's own commits).
 * - PostgreSQL has no such counter: the version is the local counter plus the clock in 5-s steps, so
 *   an answer there is at most 5 s old (what the heatmap promised before this cache existed).
 *
 * The version is read before an answer is computed and stored with it, so an answer computed while a
 * commit landed is never served after it. Bounded: at most `MAX_CHARS` characters of bodies (32 Mi:
 * 32–64 MB, as V8 keeps a string in one or two bytes a character); the oldest go first.
 * Concurrent misses of one key at one version share a single computation (after a commit every open
 * page misses at once).
 */
import type { Knex } from 'knex';
import { db } from './db.ts';
import { now } from './time.ts';

const MAX_CHARS = 32 * 1024 * 1024;
const PG_STEP_MS = 5_000;
const enabled = process.env.LOCKSTEP_ANSWER_CACHE !== 'off';

let localWrites = 0;
let storedVersion = '';
let chars = 0;
const store = new Map<string, { at: number; version: string; body: string }>();
/** computations under way, by data version and key */
const inFlight = new Map<string, Promise<{ status: number; body: string }>>();

/** This process changed the database (called after every non-GET request). */
export function noteLocalWrite(): void {
	localWrites++;
}

/** The current data version (see the file's comment). */
export async function dataVersion(k: Knex = db(), at: number = now()): Promise<string> {
	if (k.client.config.client === 'pg') return `${localWrites}:${Math.floor(at / PG_STEP_MS)}`;
	const rows = (await k.raw('PRAGMA data_version')) as { data_version: number }[];
	return `${localWrites}:${rows[0]?.data_version ?? 0}`;
}

/** A stored answer for `key` computed at `version` and at most `maxAgeMs` old at `at`, else null. */
export function cachedAnswer(key: string, version: string, at: number, maxAgeMs: number): string | null {
	if (version !== storedVersion) {
		// Everything stored belongs to an older version: drop it all at once.
		store.clear();
		chars = 0;
		storedVersion = version;
		return null;
	}
	const hit = store.get(key);
	if (!hit || hit.version !== version || at < hit.at || at - hit.at >= maxAgeMs) return null;
	return hit.body;
}

/** Keep `body` for `key`, computed at `version` read before computing it. */
export function putAnswer(key: string, version: string, at: number, body: string): void {
	if (version !== storedVersion) return; // the data changed while this answer was computed
	const old = store.get(key);
	if (old) {
		chars -= old.body.length;
		store.delete(key);
	}
	if (body.length > MAX_CHARS / 8) return;
	for (const [k, v] of store) {
		if (chars + body.length <= MAX_CHARS) break;
		store.delete(k);
		chars -= v.body.length;
	}
	store.set(key, { at, version, body });
	chars += body.length;
}

/** Forget everything (tests). */
export function clearAnswers(): void {
	store.clear();
	chars = 0;
	storedVersion = '';
}

/** What a route computes: the status and the value to send as JSON. Only 200 answers are kept. */
export interface Computed {
	status: number;
	value: unknown;
}

/** The JSON response for `key`: the kept body when valid, else `compute()` serialised (and kept when 200). */
export async function answerJson(key: string, maxAgeMs: number, compute: () => Promise<Computed>, k: Knex = db()): Promise<Response> {
	if (!enabled) {
		const { status, value } = await compute();
		return jsonBody(JSON.stringify(value), status);
	}
	const at = now();
	const version = await dataVersion(k, at);
	const hit = cachedAnswer(key, version, at, maxAgeMs);
	if (hit !== null) return jsonBody(hit);
	// One computation per key and version: right after a commit every poller misses at once, and they
	// wait for the first one's answer instead of each computing the same thing.
	const flightKey = `${version}\u0000${key}`;
	let flight = inFlight.get(flightKey);
	if (!flight) {
		flight = (async () => {
			const { status, value } = await compute();
			const body = JSON.stringify(value);
			if (status === 200) putAnswer(key, version, at, body);
			return { status, body };
		})().finally(() => inFlight.delete(flightKey));
		inFlight.set(flightKey, flight);
	}
	const { status, body } = await flight;
	return jsonBody(body, status);
}

/** How many computations are under way (tests). */
export function answersInFlight(): number {
	return inFlight.size;
}

/** A JSON response of a serialised body, never cached by the browser (the pages poll for fresh data). */
export function jsonBody(body: string, status = 200): Response {
	return new Response(body, { status, headers: { 'content-type': 'application/json', 'cache-control': 'no-store' } });
}
