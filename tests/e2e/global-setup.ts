/**
 * Starts Lockstep for the e2e run: a fresh data folder, migrations and the demo seed through the same
 * scripts a user runs, three test accounts (one per role), then the production server (`scripts/serve.js`, as `npm start`) on a free loopback port.
 */
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import fs from 'node:fs';
import net from 'node:net';
import os from 'node:os';
import path from 'node:path';
import type { TestProject } from 'vitest/node';

export const TEST_PASSWORD = 'e2e-password-42';
export const TEST_USERS = { viewer: 'e2e-viewer', engineer: 'e2e-engineer', admin: 'e2e-admin' } as const;

function freePort(): Promise<number> {
	return new Promise((resolve, reject) => {
		const s = net.createServer();
		s.listen(0, '127.0.0.1', () => {
			const port = (s.address() as net.AddressInfo).port;
			s.close(() => resolve(port));
		});
		s.on('error', reject);
	});
}

function run(args: string[], env: NodeJS.ProcessEnv) {
	const r = spawnSync(process.execPath, ['--import', 'tsx', ...args], { env, encoding: 'utf8' });
	if (r.status !== 0) throw new Error(`${args.join(' ')} failed:\n${r.stdout}\n${r.stderr}`);
	return r.stdout;
}

let server: ChildProcess | null = null;
let dataDir = '';

export default async function setup(project: TestProject) {
	if (!fs.existsSync('build/index.js')) throw new Error('build/ is missing: run `npm run build` first');
	dataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'lockstep-e2e-'));
	const port = await freePort();
	const baseURL = `http://127.0.0.1:${port}`;
	const env = { ...process.env, LOCKSTEP_DATA_DIR: dataDir, NODE_ENV: 'production' };
	run(['seeds/run.ts', '--quiet'], env);
	for (const [role, username] of Object.entries(TEST_USERS))
		run(['scripts/user-create.ts', '--username', username, '--name', `Test ${role}`, '--role', role, '--password', TEST_PASSWORD], env);
	server = spawn(process.execPath, ['scripts/serve.js'], {
		// Every test request comes from 127.0.0.1: the per-address sign-in limit would soon lock the
		// whole suite out (it is tested in tests/integration/auth.test.ts; the per-account one stays).
		env: { ...env, HOST: '127.0.0.1', PORT: String(port), ORIGIN: baseURL, BODY_SIZE_LIMIT: '250M', LOCKSTEP_SIGNIN_ADDRESS_LIMIT: '100000' },
		stdio: ['ignore', 'pipe', 'pipe']
	});
	let log = '';
	server.stdout?.on('data', (d) => (log += d));
	server.stderr?.on('data', (d) => (log += d));
	const deadline = Date.now() + 30_000;
	for (;;) {
		try {
			const r = await fetch(`${baseURL}/api/health`);
			if (r.ok) break;
		} catch {
			/* not up yet */
		}
		if (Date.now() > deadline) throw new Error(`server did not start:\n${log}`);
		await new Promise((r) => setTimeout(r, 200));
	}
	project.provide('baseURL', baseURL);
	project.provide('dataDir', dataDir);
	return async () => {
		server?.kill('SIGTERM');
		await new Promise((r) => setTimeout(r, 300));
		fs.rmSync(dataDir, { recursive: true, force: true });
	};
}

declare module 'vitest' {
	export interface ProvidedContext {
		baseURL: string;
		dataDir: string;
	}
}
