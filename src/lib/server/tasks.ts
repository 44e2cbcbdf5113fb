/**
 * Background tasks of the web process (today: rescoring after a baseline is approved), polled by the
 * page through GET /api/tasks/[id].
 *
 * In-process on purpose: the registry is a Map in this Node process, so it is small and needs no
 * queue, but it does not survive a restart. A restart in the middle of a rescore loses the task's
 * progress record, not data: rescoreSince works in chunks, each chunk in its own transaction, and
 * rescoring a wafer again against the same baseline overwrites its score (idempotent), so starting
 * the same rescore again finishes the job. One process serves Lockstep (adapter-node, one instance);
 * with several instances the poll could reach another process and answer 404 — the page says the
 * task is unknown then, and the engineer can start it again.
 */
import { randomUUID } from 'node:crypto';
import { now } from './time.ts';

export interface TaskState {
	id: string;
	kind: string;
	label: string;
	createdBy: string | null;
	startedAt: number;
	finishedAt: number | null;
	state: 'running' | 'done' | 'failed';
	done: number;
	total: number | null;
	message: string | null;
	result: Record<string, unknown> | null;
}

const tasks = new Map<string, TaskState>();
const KEEP_MS = 6 * 3_600_000;
const MAX_TASKS = 500;

function prune(): void {
	const cutoff = now() - KEEP_MS;
	for (const [id, t] of tasks) if (t.finishedAt !== null && t.finishedAt < cutoff) tasks.delete(id);
	if (tasks.size > MAX_TASKS) {
		const finished = [...tasks.values()].filter((t) => t.finishedAt !== null).sort((a, b) => a.finishedAt! - b.finishedAt!);
		for (const t of finished.slice(0, tasks.size - MAX_TASKS)) tasks.delete(t.id);
	}
}

export interface TaskContext {
	progress(done: number, total: number | null): void;
}

/**
 * Start `work` without waiting for it. Its progress and outcome are kept under the returned id; an
 * error thrown by `work` marks the task failed with the error's message.
 */
export function startTask(
	meta: { kind: string; label: string; createdBy: string | null },
	work: (ctx: TaskContext) => Promise<Record<string, unknown> | void>
): TaskState {
	prune();
	const t: TaskState = { id: randomUUID(), ...meta, startedAt: now(), finishedAt: null, state: 'running', done: 0, total: null, message: null, result: null };
	tasks.set(t.id, t);
	const ctx: TaskContext = {
		progress(done, total) {
			t.done = done;
			t.total = total;
		}
	};
	// Let the caller answer the request first; the work runs on the event loop between requests.
	setImmediate(() => {
		work(ctx)
			.then((result) => {
				t.state = 'done';
				t.result = result ?? null;
			})
			.catch((e: unknown) => {
				t.state = 'failed';
				t.message = e instanceof Error ? e.message : String(e);
			})
			.finally(() => {
				t.finishedAt = now();
			});
	});
	return { ...t };
}

export function getTask(id: string): TaskState | null {
	const t = tasks.get(id);
	return t ? { ...t } : null;
}

/** Running tasks of a kind whose label matches (so a page can show a rescore already under way). */
export function runningTasks(kind: string): TaskState[] {
	return [...tasks.values()].filter((t) => t.kind === kind && t.state === 'running').map((t) => ({ ...t }));
}
