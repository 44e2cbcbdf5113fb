/**
 * The kept API answers: served while the data version is unchanged, dropped when another connection
 * (the inbox job's process) commits or when this process writes, bounded by age. The cross-connection
 * behaviour rests on SQLite's documented `PRAGMA data_version` ("changes … committed to the database
 * by any other connection"); these tests check that the cache relies on it correctly.
 */
import path from 'node:path';
import Database from 'better-sqlite3';
import { afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import { answerJson, answersInFlight, cachedAnswer, clearAnswers, dataVersion, noteLocalWrite, putAnswer } from '../../src/lib/server/answer-cache.ts';
import { useTempDb } from '../helpers/temp-db.ts';

let env: Awaited<ReturnType<typeof useTempDb>>;
let other: Database.Database;

beforeAll(async () => {
	env = await useTempDb();
	other = new Database(path.join(env.dir, 'test.sqlite'));
});
afterAll(async () => {
	other.close();
	await env.cleanup();
});
beforeEach(() => clearAnswers());

async function ask(key: string, maxAgeMs = 60_000) {
	let computed = 0;
	const res = await answerJson(key, maxAgeMs, async () => ({ status: 200, value: { n: ++computed } }), env.k);
	return { body: await res.text(), computed, status: res.status };
}

describe('answer cache', () => {
	it('serves a kept answer while nothing changed, and computes again after another connection commits', async () => {
		expect((await ask('a')).computed).toBe(1);
		const again = await ask('a');
		expect(again.computed).toBe(0);
		expect(JSON.parse(again.body)).toEqual({ n: 1 });
		other.prepare(`INSERT INTO settings (key, value_json, updated_at) VALUES ('probe', '1', 0)`).run();
		expect((await ask('a')).computed).toBe(1);
		expect((await ask('a')).computed).toBe(0);
	});

	it('computes again after a write by this process', async () => {
		await ask('b');
		noteLocalWrite();
		expect((await ask('b')).computed).toBe(1);
	});

	it('an answer computed while the version moved on is not kept', async () => {
		const v1 = await dataVersion(env.k, 1000);
		expect(cachedAnswer('c', v1, 1000, 5000)).toBeNull();
		noteLocalWrite();
		const v2 = await dataVersion(env.k, 1000);
		expect(v2).not.toBe(v1);
		expect(cachedAnswer('d', v2, 1000, 5000)).toBeNull(); // the store moves to v2
		putAnswer('c', v1, 1000, '{"stale":true}'); // computed at v1, stored after the change: refused
		expect(cachedAnswer('c', v2, 1001, 5000)).toBeNull();
		expect(cachedAnswer('c', v1, 1001, 5000)).toBeNull();
	});

	it('honours the age cap and keys apart', () => {
		const v = 'x:1';
		expect(cachedAnswer('e', v, 0, 5000)).toBeNull();
		putAnswer('e', v, 1000, '{"e":1}');
		expect(cachedAnswer('e', v, 5999, 5000)).toBe('{"e":1}');
		expect(cachedAnswer('e', v, 6000, 5000)).toBeNull();
		expect(cachedAnswer('e', v, 999, 5000)).toBeNull(); // a clock that went back
		expect(cachedAnswer('f', v, 2000, 5000)).toBeNull();
	});

	it('does not keep answers other than 200', async () => {
		let n = 0;
		const compute = async () => ({ status: 404, value: { error: 'No chamber X.', n: ++n } });
		expect((await answerJson('g', 60_000, compute, env.k)).status).toBe(404);
		await answerJson('g', 60_000, compute, env.k);
		expect(n).toBe(2);
	});
});

describe('answer cache under a burst of misses', () => {
	it('concurrent requests for one key and version share one computation; other keys compute apart', async () => {
		clearAnswers();
		noteLocalWrite(); // a fresh version, as right after a commit
		let computed = 0;
		const slow = async () => {
			computed++;
			await new Promise((r) => setTimeout(r, 30));
			return { status: 200, value: { n: computed } };
		};
		const burst = await Promise.all(Array.from({ length: 20 }, () => answerJson('burst', 60_000, slow, env.k)));
		expect(computed).toBe(1);
		expect(new Set(await Promise.all(burst.map((r) => r.text())))).toEqual(new Set(['{"n":1}']));
		expect(answersInFlight()).toBe(0);
		await Promise.all([answerJson('other-a', 60_000, slow, env.k), answerJson('other-b', 60_000, slow, env.k)]);
		expect(computed).toBe(3);
	});

	it('a failed computation is not shared with later requests', async () => {
		let calls = 0;
		const failing = async () => {
			calls++;
			throw new Error('database went away');
		};
		await expect(answerJson('fails', 60_000, failing, env.k)).rejects.toThrow(/went away/);
		await expect(answerJson('fails', 60_000, failing, env.k)).rejects.toThrow(/went away/);
		expect(calls).toBe(2);
		expect(answersInFlight()).toBe(0);
	});
});

describe('answer cache bound', () => {
	it('keeps at most 32 Mi characters of bodies: the oldest go first, an oversize body is not kept', () => {
		clearAnswers();
		const v = 'bound:1';
		expect(cachedAnswer('probe', v, 0, 60_000)).toBeNull(); // the store moves to this version
		const big = 'x'.repeat(4 * 1024 * 1024 - 16); // just under an eighth of the bound
		for (let i = 0; i < 9; i++) putAnswer(`big-${i}`, v, i, big);
		expect(cachedAnswer('big-0', v, 10, 60_000)).toBeNull(); // evicted: nine would pass 32 Mi
		for (let i = 1; i < 9; i++) expect(cachedAnswer(`big-${i}`, v, 10, 60_000)).not.toBeNull();
		putAnswer('huge', v, 11, 'y'.repeat(4 * 1024 * 1024 + 1));
		expect(cachedAnswer('huge', v, 12, 60_000)).toBeNull();
		clearAnswers();
	});
});
