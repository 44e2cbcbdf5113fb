/**
 * Starts Lockstep for the e2e run: a fresh data folder, migrations and the demo seed through the same
 * scripts a user runs, three test accounts (one per role), then the production server (`scripts/serve.js`,
 * as `npm start`) on a free loopback port, all through tests/load/server.ts.
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import type { TestProject } from 'vitest/node';
import { createUser, runTsx, startServer, type RunningServer } from '../load/server.ts';

export const TEST_PASSWORD = 'e2e-password-42';
export const TEST_USERS = { viewer: 'e2e-viewer', engineer: 'e2e-engineer', admin: 'e2e-admin' } as const;

let server: RunningServer | null = null;
let dataDir = '';

export default async function setup(project: TestProject) {
	dataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'lockstep-e2e-'));
	// The demo's small variant (LOCKSTEP_DEMO_VOLUME_DAYS=0: every day at the compressed pace, ≈ 26k
	// wafer-steps) keeps the suite within CI's time; its month is the full demo's first 27 days, and the
	// episodes the tests read are the same (tests/unit/demo/volume.test.ts).
	runTsx(['seeds/run.ts', '--quiet'], { LOCKSTEP_DATA_DIR: dataDir, NODE_ENV: 'production', LOCKSTEP_DEMO_VOLUME_DAYS: '0' });
	for (const [role, username] of Object.entries(TEST_USERS)) createUser(dataDir, username, role as keyof typeof TEST_USERS, TEST_PASSWORD, `Test ${role}`);
	// Every test request comes from 127.0.0.1: the per-address sign-in limit would soon lock the
	// whole suite out (it is tested in tests/integration/auth.test.ts; the per-account one stays).
	server = await startServer(dataDir, { LOCKSTEP_SIGNIN_ADDRESS_LIMIT: '100000' });
	project.provide('baseURL', server.base);
	project.provide('dataDir', dataDir);
	return async () => {
		await server?.stop();
		fs.rmSync(dataDir, { recursive: true, force: true });
	};
}

declare module 'vitest' {
	export interface ProvidedContext {
		baseURL: string;
		dataDir: string;
	}
}
