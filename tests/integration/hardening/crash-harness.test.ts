/**
 * The crash tests' harness (tests/helpers/crash.ts) itself: a kill it reports is a real SIGKILL, a
 * child that ends first is not counted as killed, and a round that fails leaves no child running.
 */
import { describe, expect, it } from 'vitest';
import { crashRounds, killWhen, spawnTsx } from '../../helpers/crash.ts';

// A child that prints a numbered tick every 5 ms until it is killed; one that ends at once.
const ticker = () => spawnTsx(['-e', 'let i = 0; setInterval(() => console.log(`tick ${++i}`), 5);'], {});
const quitter = () => spawnTsx(['-e', 'console.log("bye")'], {});
const ticks = (log: string) => [...log.matchAll(/tick (\d+)/g)].length;

describe('crash harness', () => {
	it('kills once the condition holds, not before', async () => {
		const child = ticker();
		expect(await killWhen(child, () => ticks(child.log()) >= 3, { delayMs: 10 })).toBe(true);
		expect(await child.exited).toEqual({ code: null, signal: 'SIGKILL' });
		expect(ticks(child.log())).toBeGreaterThanOrEqual(3);
	});

	it('reports no kill when the child ends on its own first', async () => {
		const child = quitter();
		expect(await killWhen(child, () => false)).toBe(false);
		expect(await child.exited).toEqual({ code: 0, signal: null });
		expect(child.log()).toContain('bye');
	});

	it('counts only the rounds the kill ended and checks every round', async () => {
		const seen: string[] = [];
		const kills = await crashRounds({
			rounds: 3,
			start: (round) => (round === 1 ? quitter() : ticker()),
			killWhen: (c, round) => round !== 1 && ticks(c.log()) >= 2,
			check: ({ round, exit, killed }) => void seen.push(`${round}:${killed}:${exit.signal ?? exit.code}`)
		});
		expect(kills).toBe(2);
		expect(seen).toEqual(['0:true:SIGKILL', '1:false:0', '2:true:SIGKILL']);
	});

	it('kills the child of a round whose work fails', async () => {
		let child: ReturnType<typeof ticker> | null = null;
		const failing = crashRounds({
			rounds: 1,
			start: () => (child = ticker()),
			drive: () => Promise.reject(new Error('the work failed')),
			killWhen: () => false,
			check: () => undefined
		});
		await expect(failing).rejects.toThrow('the work failed');
		expect((await child!.exited).signal).toBe('SIGKILL');
	});
});
