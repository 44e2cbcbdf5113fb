/** Small HTTP helpers for e2e tests: sign in as a role and keep the session cookie. */
import { inject } from 'vitest';
import { TEST_PASSWORD, TEST_USERS } from './global-setup.ts';

export type Who = 'anonymous' | keyof typeof TEST_USERS;

export function base(): string {
	return inject('baseURL');
}

/** Sign in through the real form action and return the session cookie ('' for anonymous). */
export async function signIn(who: Who, password = TEST_PASSWORD): Promise<string> {
	if (who === 'anonymous') return '';
	const body = new URLSearchParams({ username: TEST_USERS[who], password, next: '/' });
	const r = await fetch(`${base()}/sign-in`, {
		method: 'POST',
		body,
		redirect: 'manual',
		headers: { origin: base(), 'content-type': 'application/x-www-form-urlencoded', accept: 'text/html' }
	});
	const cookie = (r.headers.getSetCookie?.() ?? []).find((c) => c.startsWith('lockstep_session='));
	if (r.status !== 303 || !cookie) throw new Error(`sign-in as ${who} failed: ${r.status}`);
	return cookie.split(';')[0];
}

export async function request(
	path: string,
	opts: { method?: string; cookie?: string; form?: Record<string, string>; origin?: string; headers?: Record<string, string> } = {}
) {
	// A browser's Accept header: SvelteKit answers form actions with JSON when JSON is preferred.
	const headers: Record<string, string> = { accept: 'text/html,application/xhtml+xml', ...(opts.headers ?? {}) };
	if (opts.cookie) headers.cookie = opts.cookie;
	let body: URLSearchParams | undefined;
	if (opts.form) {
		body = new URLSearchParams(opts.form);
		headers['content-type'] = 'application/x-www-form-urlencoded';
		headers.origin = opts.origin ?? base();
	}
	return fetch(`${base()}${path}`, { method: opts.method ?? (opts.form ? 'POST' : 'GET'), headers, body, redirect: 'manual' });
}
