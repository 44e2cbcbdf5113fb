import type { Role } from '$lib/server/roles';

declare global {
	namespace App {
		interface Locals {
			user: { id: string; username: string; displayName: string; role: Role; timeZone: string; email: string | null } | null;
			session: import('lucia').Session | null;
			/** Set when the request was authenticated by an API token instead of a session (for a personal
			 * token, `user` is its owner). */
			apiToken: import('$lib/server/api-tokens').TokenIdentity | null;
		}
		interface Error {
			message: string;
			/** set for unexpected errors: the id the server log carries (hooks.server.ts handleError) */
			errorId?: string;
		}
		interface PageData {
			user?: App.Locals['user'];
			/** the zone every time is shown in (root layout; src/lib/server/clock.ts) */
			zone?: string;
		}
	}
}

export {};
