/**
 * The crash tests' harness: start a child process, put it to work, SIGKILL it at a chosen moment, wait
 * for it to die, check the store, start it again. The inbox-worker test
 * (tests/integration/hardening/ingest-crash.test.ts) and the web-server test
 * (tests/e2e/hardening-crash-server.e2e.ts) share it; the server itself comes from tests/load/server.ts,
 * whose RunningServer is a Watched child.
 */
import { spawn, type ChildProcess } from 'node:child_process';

export interface Exit {
	code: number | null;
	signal: NodeJS.Signals | null;
}

/** A child process under watch: its exit, and everything it printed so far. */
export interface Watched {
	proc: ChildProcess;
	exited: Promise<Exit>;
	log: () => string;
}

/** Run `node --import tsx <args>` (a job's entry point) in the background with its output collected. */
export function spawnTsx(args: string[], env: NodeJS.ProcessEnv): Watched {
	const proc = spawn(process.execPath, ['--import', 'tsx', ...args], { env: { ...process.env, ...env }, stdio: ['ignore', 'pipe', 'pipe'] });
	let out = '';
	proc.stdout?.on('data', (d) => (out += d));
	proc.stderr?.on('data', (d) => (out += d));
	const exited = new Promise<Exit>((r) => proc.on('exit', (code, signal) => r({ code, signal })));
	return { proc, exited, log: () => out };
}

/**
 * SIGKILL `child` once `ready()` holds (asked every `pollMs`), `delayMs` after that. Resolves true when
 * the signal was sent, false when the child ended first, on its own or during the delay.
 */
export function killWhen(child: Watched, ready: () => boolean, { pollMs = 3, delayMs = 0 }: { pollMs?: number; delayMs?: number } = {}): Promise<boolean> {
	return new Promise((resolve) => {
		const timer = setInterval(() => {
			if (!ready()) return;
			clearInterval(timer);
			setTimeout(() => resolve(child.proc.kill('SIGKILL')), delayMs);
		}, pollMs);
		void child.exited.then(() => {
			clearInterval(timer);
			resolve(false);
		});
	});
}

export interface CrashRound<C extends Watched> {
	round: number;
	child: C;
	exit: Exit;
	/** the child died of the SIGKILL sent to it (not of its own accord first) */
	killed: boolean;
}

/**
 * `rounds` times: start the child, run `drive` (the work put on it, if any) alongside, SIGKILL it as
 * soon as `killWhen` holds (`delayMs` later), wait for its exit and for the work to settle, then hand
 * the round to `check`, which asserts that the store is consistent whatever the moment of the kill.
 * Returns how many rounds the kill ended. A child left running by a failing round is killed.
 */
export async function crashRounds<C extends Watched>(opts: {
	rounds: number;
	start: (round: number) => Promise<C> | C;
	drive?: (child: C, round: number) => Promise<unknown>;
	killWhen: (child: C, round: number) => boolean;
	delayMs?: (round: number) => number;
	/** how often killWhen is asked, in ms */
	pollMs?: number;
	check: (r: CrashRound<C>) => Promise<void> | void;
}): Promise<number> {
	let kills = 0;
	for (let round = 0; round < opts.rounds; round++) {
		const child = await opts.start(round);
		try {
			const delayMs = opts.delayMs?.(round) ?? 0;
			const [sent] = await Promise.all([killWhen(child, () => opts.killWhen(child, round), { delayMs, pollMs: opts.pollMs }), opts.drive?.(child, round)]);
			const exit = await child.exited;
			const killed = sent && exit.signal === 'SIGKILL';
			if (killed) kills++;
			await opts.check({ round, child, exit, killed });
		} finally {
			if (child.proc.exitCode === null && child.proc.signalCode === null) child.proc.kill('SIGKILL');
		}
	}
	return kills;
}
