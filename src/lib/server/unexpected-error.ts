/**
 * What an unexpected error (a bug, a lost database) shows and logs. The page gets a plain sentence and
 * a short reference id, never the error's own text or stack (which can hold SQL, paths or data); the
 * server log gets the same id with the method, path, status and stack, so a report "error 7KQ2-M9XD
 * at 06:12" finds its line. Expected errors (error(404, …) and the like) do not come here: SvelteKit
 * shows their message as given.
 */
import { randomBytes } from 'node:crypto';

// Crockford's base-32 alphabet: no I, L, O or U to misread when a person reads the id aloud.
const ALPHABET = '0123456789ABCDEFGHJKMNPQRSTVWXYZ';

/** A short id people can read out: "7KQ2-M9XD" (40 random bits). */
export function newErrorId(): string {
	const b = randomBytes(5);
	let bits = 0n;
	for (const x of b) bits = (bits << 8n) | BigInt(x);
	let s = '';
	for (let i = 0; i < 8; i++) s = ALPHABET[Number((bits >> BigInt(5 * i)) & 31n)] + s;
	return `${s.slice(0, 4)}-${s.slice(4)}`;
}

export interface UnexpectedInput {
	error: unknown;
	status: number;
	message: string;
	event: { request: { method: string }; url: URL; route: { id: string | null } };
}

/**
 * Log an unexpected error under a new id and answer what the page may show.
 * @returns `{ message, errorId }` for App.Error (no id for a 404: nothing went wrong)
 */
export function reportUnexpected(input: UnexpectedInput, log: (line: string) => void = (l) => console.error(l)): { message: string; errorId?: string } {
	// An address with no page is not a fault of Lockstep's: no id, no log line (probes would flood the log).
	if (input.status === 404) return { message: 'There is no page at this address.' };
	const errorId = newErrorId();
	const e = input.error;
	const detail = e instanceof Error ? (e.stack ?? `${e.name}: ${e.message}`) : String(e);
	log(`[lockstep] error ${errorId} · ${input.status} · ${input.event.request.method} ${input.event.url.pathname} (route ${input.event.route.id ?? 'none'})\n${detail}`);
	const message = 'Something went wrong on Lockstep’s side. Nothing you entered was lost; try again, and if it happens again give your administrator the reference below.';
	return { message, errorId };
}
