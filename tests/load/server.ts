/**
 * A Lockstep server of one's own for the load script, the crash tests and the benches: `node build` on
 * a free 127.0.0.1 port over a given data folder, started, signed into, killed and restarted. Nothing
 * here listens anywhere but loopback.
 */
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import fs from 'node:fs';
import net from 'node:net';

export function freePort(): Promise<number> {
	return new Promise((resolve, reject) => {
		const s = net.createServer();
		s.listen(0, '127.0.0.1', () => {
			const port = (s.address() as net.AddressInfo).port;
			s.close(() => resolve(port));
		});
		s.on('error', reject);
	});
}

/** Run a TypeScript entry point (seed, user-create) the way a user does; throws with its output. */
export function runTsx(args: string[], env: NodeJS.ProcessEnv): string {
	const r = spawnSync(process.execPath, ['--import', 'tsx', ...args], { env: { ...process.env, ...env }, encoding: 'utf8', maxBuffer: 64 << 20 });
	if (r.status !== 0) throw new Error(`${args.join(' ')} failed (${r.status}):\n${r.stdout}\n${r.stderr}`);
	return r.stdout;
}

export function createUser(dataDir: string, username: string, role: 'viewer' | 'engineer' | 'admin', password: string, displayName = `Load ${username}`) {
	runTsx(['scripts/user-create.ts', '--username', username, '--name', displayName, '--role', role, '--password', password], { LOCKSTEP_DATA_DIR: dataDir, NODE_ENV: 'production' });
}

export interface RunningServer {
	base: string;
	port: number;
	proc: ChildProcess;
	/** everything the server printed so far */
	log: () => string;
	/** SIGTERM and wait for the exit */
	stop: () => Promise<void>;
	/** SIGKILL and wait for the exit */
	kill: () => Promise<void>;
	exited: Promise<{ code: number | null; signal: NodeJS.Signals | null }>;
}

export async function startServer(dataDir: string, env: NodeJS.ProcessEnv = {}, port?: number): Promise<RunningServer> {
	if (!fs.existsSync('build/index.js')) throw new Error('build/ is missing: run `npm run build` first');
	const p = port ?? (await freePort());
	const base = `http://127.0.0.1:${p}`;
	const proc = spawn(process.execPath, ['scripts/serve.js'], {
		env: { ...process.env, LOCKSTEP_DATA_DIR: dataDir, NODE_ENV: 'production', HOST: '127.0.0.1', PORT: String(p), ORIGIN: base, BODY_SIZE_LIMIT: '250M', ...env },
		stdio: ['ignore', 'pipe', 'pipe']
	});
	let out = '';
	proc.stdout?.on('data', (d) => (out += d));
	proc.stderr?.on('data', (d) => (out += d));
	const exited = new Promise<{ code: number | null; signal: NodeJS.Signals | null }>((r) => proc.on('exit', (code, signal) => r({ code, signal })));
	let gone = false;
	void exited.then(() => (gone = true));
	const deadline = Date.now() + 30_000;
	for (;;) {
		if (gone) throw new Error(`server exited while starting:\n${out}`);
		try {
			if ((await fetch(`${base}/api/health`)).ok) break;
		} catch {
			/* not up yet */
		}
		if (Date.now() > deadline) {
			proc.kill('SIGKILL');
			throw new Error(`server did not start within 30 s:\n${out}`);
		}
		await new Promise((r) => setTimeout(r, 150));
	}
	const end = (signal: NodeJS.Signals) => async () => {
		if (!gone) proc.kill(signal);
		await exited;
	};
	return { base, port: p, proc, log: () => out, stop: end('SIGTERM'), kill: end('SIGKILL'), exited };
}

/** Sign in through the real form action; returns `lockstep_session=…` for a Cookie header. */
export async function signIn(base: string, username: string, password: string): Promise<string> {
	const r = await fetch(`${base}/sign-in`, {
		method: 'POST',
		redirect: 'manual',
		headers: { origin: base, 'content-type': 'application/x-www-form-urlencoded', accept: 'text/html' },
		body: new URLSearchParams({ username, password, next: '/' })
	});
	const cookie = r.headers.getSetCookie().find((c) => c.startsWith('lockstep_session='));
	if (r.status !== 303 || !cookie) throw new Error(`sign-in as ${username} failed: ${r.status}`);
	return cookie.split(';')[0];
}

/** Sorted copy's p-th percentile (nearest rank). */
export function percentile(sorted: number[], p: number): number {
	if (sorted.length === 0) return NaN;
	const i = Math.min(sorted.length - 1, Math.max(0, Math.ceil((p / 100) * sorted.length) - 1));
	return sorted[i];
}
