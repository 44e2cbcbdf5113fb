import { clockChoice } from '$lib/server/clock';
import type { LayoutServerLoad } from './$types';

// Not a guard (layouts do not rerun on client navigation): access is enforced in hooks.server.ts.
export const load: LayoutServerLoad = async ({ locals, cookies }) => {
	const theme: 'light' | 'dark' = cookies.get('ls_theme') === 'light' ? 'light' : 'dark';
	const clock = clockChoice(cookies, locals.user);
	return { user: locals.user, theme, clock, zone: clock.zone };
};
