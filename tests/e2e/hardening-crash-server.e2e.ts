/**
 * The web server killed with SIGKILL in the middle of acknowledgements (issue 7, crash): a server of
 * its own over a copy of the e2e database with a few hundred extra open alarms, many acknowledge
 * POSTs in flight (5 alarms each), SIGKILL after the first answers, restart. Afterwards there is no
 * half-written audit entry: every acknowledged alarm has exactly one matching `acknowledged` row in
 * alarm_actions (same time), every such row belongs to an acknowledged alarm, each POST's alarms are
 * all acknowledged or none, and every POST that was answered as a success is on disk.
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import Database from 'better-sqlite3';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import { TEST_PASSWORD, TEST_USERS } from './global-setup.ts';
import { signIn, startServer, type RunningServer } from '../load/server.ts';
import { crashRounds } from '../helpers/crash.ts';

const ROUNDS = 3;
const POSTS = 40;
const PER_POST = 5;

let dir: string;
let dbFile: string;
let server: RunningServer | null = null;
let probeIds: number[] = [];
let cause = '';

beforeAll(async () => {
	dir = fs.mkdtempSync(path.join(os.tmpdir(), 'lockstep-crash-web-'));
	dbFile = path.join(dir, 'lockstep.sqlite');
	const src = new Database(path.join(inject('dataDir'), 'lockstep.sqlite'), { readonly: true });
	await src.backup(dbFile);
	src.close();
	const d = new Database(dbFile);
	try {
		const at = (d.prepare(`SELECT chamber_id, recipe_step_id FROM wafer_steps LIMIT 1`).get() as { chamber_id: number; recipe_step_id: number });
		cause = (d.prepare(`SELECT code FROM cause_codes WHERE active = 1 ORDER BY id LIMIT 1`).get() as { code: string }).code;
		const ins = d.prepare(`INSERT INTO alarms (chamber_id, recipe_step_id, rule, severity, state, opened_at, last_seen_at, wafer_count) VALUES (?, ?, ?, 'alarm', 'open', ?, ?, 1)`);
		const act = d.prepare(`INSERT INTO alarm_actions (alarm_id, at, action, from_state, to_state) VALUES (?, ?, 'opened', NULL, 'open')`);
		const t = Date.now();
		d.transaction(() => {
			for (let i = 0; i < ROUNDS * POSTS * PER_POST; i++) {
				const id = Number(ins.run(at.chamber_id, at.recipe_step_id, `crash-probe-${i}`, t, t).lastInsertRowid);
				act.run(id, t);
				probeIds.push(id);
			}
		})();
	} finally {
		d.close();
	}
});
afterAll(async () => {
	await server?.kill();
	fs.rmSync(dir, { recursive: true, force: true });
});

function audit() {
	const d = new Database(dbFile, { readonly: true });
	try {
		const alarms = d.prepare(`SELECT id, state, acknowledged_at FROM alarms WHERE rule LIKE 'crash-probe-%'`).all() as { id: number; state: string; acknowledged_at: number | null }[];
		const acks = d.prepare(`SELECT a.alarm_id, a.at, a.to_state FROM alarm_actions a JOIN alarms al ON al.id = a.alarm_id WHERE al.rule LIKE 'crash-probe-%' AND a.action = 'acknowledged'`).all() as { alarm_id: number; at: number; to_state: string }[];
		return { alarms, acks };
	} finally {
		d.close();
	}
}

function acknowledge(base: string, cookie: string, ids: number[]) {
	const body = new URLSearchParams();
	for (const id of ids) body.append('alarmId', String(id));
	body.set('causeCode', cause);
	body.set('disposition', 'continue');
	body.set('comment', `crash probe ${ids[0]}–${ids[ids.length - 1]}`);
	return fetch(`${base}/alarms?/acknowledge`, {
		method: 'POST',
		body,
		redirect: 'manual',
		headers: { cookie, origin: base, accept: 'application/json', 'content-type': 'application/x-www-form-urlencoded', 'x-sveltekit-action': 'true' }
	});
}

describe('web server killed mid-acknowledgement', () => {
	it(`leaves no half-written audit entry (${ROUNDS} kills, ${POSTS} POSTs of ${PER_POST} alarms in flight each)`, async () => {
		const answeredOk: number[][] = [];
		const batches: number[][] = [];
		let answered = 0;
		await crashRounds({
			rounds: ROUNDS,
			start: async () => {
				answered = 0;
				return (server = await startServer(dir));
			},
			drive: async (s, round) => {
				const cookie = await signIn(s.base, TEST_USERS.engineer, TEST_PASSWORD);
				const posts = Array.from({ length: POSTS }, (_, p) => {
					const ids = probeIds.slice((round * POSTS + p) * PER_POST, (round * POSTS + p + 1) * PER_POST);
					batches.push(ids);
					return acknowledge(s.base, cookie, ids)
						.then(async (r) => {
							const j = (await r.json()) as { type?: string };
							answered++;
							if (r.status === 200 && j.type === 'success') answeredOk.push(ids);
						})
						.catch(() => {
							answered++; // connection reset by the kill
						});
				});
				await Promise.all(posts);
			},
			killWhen: (_, round) => answered >= 3 + round * 4, // kill after a few answers: most POSTs are still in flight
			pollMs: 1,
			check: ({ exit }) => {
				expect(exit.signal).toBe('SIGKILL');
				server = null;
			}
		});
		// Restart once more: the server comes back healthy and acknowledging still works.
		server = await startServer(dir);
		expect((await fetch(`${server.base}/api/health`)).status).toBe(200);

		const { alarms, acks } = audit();
		const state = new Map(alarms.map((a) => [a.id, a]));
		const acksBy = new Map<number, typeof acks>();
		for (const a of acks) acksBy.set(a.alarm_id, [...(acksBy.get(a.alarm_id) ?? []), a]);
		const acknowledged = alarms.filter((a) => a.state === 'acknowledged');
		// Some POSTs committed and some did not, or the kill proved nothing.
		expect(acknowledged.length).toBeGreaterThan(0);
		expect(acknowledged.length).toBeLessThan(probeIds.length);
		for (const a of acknowledged) {
			const rows = acksBy.get(a.id) ?? [];
			expect(rows, `alarm ${a.id}`).toHaveLength(1);
			expect(Number(rows[0].at)).toBe(Number(a.acknowledged_at));
			expect(rows[0].to_state).toBe('acknowledged');
		}
		for (const [id] of acksBy) expect(state.get(id)?.state, `audit row for alarm ${id}`).toBe('acknowledged');
		for (const a of alarms.filter((x) => x.state === 'open')) expect(a.acknowledged_at).toBeNull();
		// All or nothing per POST.
		for (const ids of batches) {
			const s = new Set(ids.map((id) => state.get(id)!.state));
			expect(s.size, `batch ${ids.join(',')}`).toBe(1);
		}
		// Durable: an answered success is on disk after the kill.
		for (const ids of answeredOk) for (const id of ids) expect(state.get(id)!.state).toBe('acknowledged');

		const cookie = await signIn(server.base, TEST_USERS.engineer, TEST_PASSWORD);
		const rest = alarms.filter((a) => a.state === 'open').slice(0, 2).map((a) => a.id);
		const r = await acknowledge(server.base, cookie, rest);
		expect(r.status).toBe(200);
		expect(((await r.json()) as { type: string }).type).toBe('success');
		expect(audit().acks.filter((a) => rest.includes(a.alarm_id))).toHaveLength(2);
	}, 120_000);
});
