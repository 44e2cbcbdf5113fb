/**
 * The demo fab's seed: demo accounts now; the fab itself is added as the generator lands.
 */
import type { Knex } from 'knex';
import { createUser } from '../src/lib/server/users.ts';

export const DEMO_PASSWORD = 'lockstep-demo';
export const DEMO_ACCOUNTS = [
	{ username: 'demo-admin', displayName: 'Demo Admin', role: 'admin' as const },
	{ username: 'demo-engineer', displayName: 'Demo Engineer', role: 'engineer' as const },
	{ username: 'demo-viewer', displayName: 'Demo Viewer', role: 'viewer' as const }
];

export async function seedDemo(k: Knex, opts: { log: (s: string) => void }): Promise<string> {
	const existing = Number((await k('users').count({ n: '*' }).first())?.n ?? 0);
	if (existing > 0) return 'Database already has users; demo seed skipped.';
	for (const a of DEMO_ACCOUNTS) await createUser({ ...a, password: DEMO_PASSWORD }, k);
	opts.log(`Demo accounts (password "${DEMO_PASSWORD}"): ${DEMO_ACCOUNTS.map((a) => `${a.username} (${a.role})`).join(', ')}`);
	return 'Demo seed done.';
}
