/**
 * The inbox job: ingest each new file in the inbox folder once, then move it to `processed/` (read to
 * the end) or `quarantine/` (refused, or not one row usable) with `<name>.report.json` beside it.
 *
 * Crash safety: a file leaves the inbox only after its transaction committed (pipeline.ts), and its
 * report is written before it is moved. A crash before the commit leaves the database untouched and the
 * file in the inbox, so the next run processes it from the start; a crash after the commit but before
 * the move makes the next run find the same SHA-256 already stored, which is a no-op, and move the
 * file with the stored report. Either way the end state is that of an uninterrupted run.
 *
 * Tool hosts should write a file under a name starting with "." or ending in ".part" and rename it
 * when complete. For hosts that write straight into the inbox, a file is taken only when (issue 13):
 * - it was not modified in the last `settleMs`;
 * - its size and modification time are the same in two scans `stableMs` apart;
 * - it ends complete — a CSV with a line break, a JSON with `]` or `}` — or has not changed for
 *   `incompleteGraceMs` (a host that never ends its last line). A file cut inside a number and paused
 *   was taken before, with the cut value stored.
 *
 * Run alone: `node --import tsx jobs/ingest-inbox.ts [--progress]` processes the inbox once and exits.
 */
import fs from 'node:fs';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import type { Knex } from 'knex';
import { config } from '../src/lib/server/config.ts';
import { closeDb, db, migrateLatest } from '../src/lib/server/db.ts';
import { ingestFile, recoverInterruptedIngests, sweepSpool, type IngestProgress, type IngestReport } from '../src/lib/server/ingest/index.ts';
import { yieldToWebServer } from './priority.ts';

export interface InboxOptions {
	inboxDir?: string;
	/** leave files modified more recently than this for the next run (default 5 s) */
	settleMs?: number;
	/** a file's size and mtime must be equal in two scans this far apart (default 2 s; 0 when settleMs is 0) */
	stableMs?: number;
	/** a file whose end is incomplete is left alone until unchanged this long (default 10 min; 0 when settleMs is 0) */
	incompleteGraceMs?: number;
	k?: Knex;
	log?: (line: string) => void;
	onProgress?: (name: string, p: IngestProgress) => void;
}

export interface InboxOutcome {
	name: string;
	/** where the file went (null: left in the inbox for another attempt) */
	movedTo: string | null;
	report: IngestReport;
}

/** After this many internal failures on the same bytes a file is quarantined instead of retried. */
const MAX_FAILED_ATTEMPTS = 3;

function candidates(dir: string, settleMs: number): string[] {
	const t = Date.now();
	return fs
		.readdirSync(dir, { withFileTypes: true })
		.filter((e) => e.isFile() && !e.name.startsWith('.') && !/\.(part|tmp)$/i.test(e.name) && !e.name.endsWith('.report.json'))
		.map((e) => ({ name: e.name, mtime: fs.statSync(path.join(dir, e.name)).mtimeMs }))
		// settleMs 0 takes every file, even one whose mtime runs a little ahead of this clock (a file
		// system on another host's clock).
		.filter((f) => settleMs <= 0 || t - f.mtime >= settleMs)
		.sort((a, b) => a.mtime - b.mtime || a.name.localeCompare(b.name))
		.map((f) => f.name);
}

interface Seen {
	size: number;
	mtimeMs: number;
}

function look(file: string): Seen | null {
	try {
		const st = fs.statSync(file);
		return { size: st.size, mtimeMs: st.mtimeMs };
	} catch {
		return null; // moved or removed meanwhile
	}
}

/** Whether a file ends as a complete file of its kind: a CSV's last line ends, a JSON's last bracket closes. */
function endsComplete(file: string, size: number): boolean {
	if (size === 0) return true; // refused as empty, with its own message
	const n = Math.min(size, 64);
	const buf = Buffer.alloc(n);
	const fd = fs.openSync(file, 'r');
	try {
		fs.readSync(fd, buf, 0, n, size - n);
	} finally {
		fs.closeSync(fd);
	}
	if (file.toLowerCase().endsWith('.json')) {
		const tail = buf.toString('latin1').trimEnd();
		return tail.endsWith(']') || tail.endsWith('}');
	}
	return buf[n - 1] === 0x0a;
}

/**
 * The files ready to take: stable across two scans `stableMs` apart, and complete (or unchanged for
 * the grace period). Files left out are looked at again next run.
 */
async function readyFiles(dir: string, names: string[], stableMs: number, graceMs: number, log: (s: string) => void): Promise<string[]> {
	const first = new Map(names.map((n) => [n, look(path.join(dir, n))]));
	if (stableMs > 0 && names.length) await new Promise((r) => setTimeout(r, stableMs));
	const ready: string[] = [];
	for (const name of names) {
		const file = path.join(dir, name);
		const a = first.get(name);
		const b = look(file);
		if (!a || !b) continue;
		if (a.size !== b.size || a.mtimeMs !== b.mtimeMs) {
			log(`inbox: ${name} is still being written; taken when it stops changing`);
			continue;
		}
		if (!endsComplete(file, b.size) && Date.now() - b.mtimeMs < graceMs) {
			log(`inbox: ${name} ends inside a line (still being written?); taken once complete, or unchanged for ${Math.round(graceMs / 60_000)} min`);
			continue;
		}
		ready.push(name);
	}
	return ready;
}

/** One worker at a time per inbox, across processes: an exclusive lock file holding the pid. */
function takeLock(dir: string): (() => void) | null {
	const lock = path.join(dir, '.inbox.lock');
	for (let attempt = 0; attempt < 2; attempt++) {
		try {
			fs.writeFileSync(lock, String(process.pid), { flag: 'wx' });
			return () => fs.rmSync(lock, { force: true });
		} catch (e) {
			if ((e as NodeJS.ErrnoException).code !== 'EEXIST') throw e;
			const pid = Number(fs.readFileSync(lock, 'utf8'));
			let alive = false;
			try {
				alive = pid > 0 && process.kill(pid, 0);
			} catch {
				alive = false;
			}
			if (alive) return null;
			fs.rmSync(lock, { force: true }); // left by a worker that died (e.g. SIGKILL)
		}
	}
	return null;
}

function freeName(dir: string, name: string): string {
	if (!fs.existsSync(path.join(dir, name))) return name;
	const ext = path.extname(name);
	const stem = name.slice(0, name.length - ext.length);
	const stamp = new Date().toISOString().replace(/[:.]/g, '').replace('T', '-');
	for (let i = 0; ; i++) {
		const n = `${stem}.${stamp}${i ? `-${i}` : ''}${ext}`;
		if (!fs.existsSync(path.join(dir, n))) return n;
	}
}

function writeAtomic(file: string, text: string) {
	const tmp = `${file}.tmp`;
	fs.writeFileSync(tmp, text);
	fs.renameSync(tmp, file);
}

async function destinationFor(k: Knex, report: IngestReport, name: string): Promise<'processed' | 'quarantine' | null> {
	if (report.status === 'rejected') return 'quarantine';
	if (report.status === 'failed') {
		const n = Number((await k('ingest_files').where({ original_name: name, sha256: report.sha256, status: 'failed' }).count({ n: '*' }).first())?.n ?? 0);
		return n >= MAX_FAILED_ATTEMPTS ? 'quarantine' : null;
	}
	if (report.status === 'done' && report.rows.accepted + report.rows.duplicate === 0) return 'quarantine';
	return 'processed';
}

/** Process the inbox once. Returns what happened to each file (nothing when another worker holds it). */
export async function runInbox(opts: InboxOptions = {}): Promise<InboxOutcome[]> {
	const dir = opts.inboxDir ?? config.inboxDir;
	const k = opts.k ?? db();
	const log = opts.log ?? ((s: string) => console.log(s));
	for (const sub of ['', 'processed', 'quarantine']) fs.mkdirSync(path.join(dir, sub), { recursive: true });
	const release = takeLock(dir);
	if (!release) {
		log('inbox: another worker is running; skipped');
		return [];
	}
	const out: InboxOutcome[] = [];
	try {
		// What a killed worker left: a file not yet flipped is undone (it is still in the inbox and is
		// read again below), a flipped file's pending scoring is finished; orphan spool files go.
		const recovered = await recoverInterruptedIngests(k, ['inbox']);
		if (recovered.undone || recovered.scored) log(`inbox: recovered after an interruption: ${recovered.undone} unpublished file(s) undone, ${recovered.scored} file(s) scored`);
		sweepSpool();
		const settleMs = opts.settleMs ?? 5000;
		const stableMs = opts.stableMs ?? (settleMs > 0 ? 2000 : 0);
		const graceMs = opts.incompleteGraceMs ?? (settleMs > 0 ? 10 * 60_000 : 0);
		for (const name of await readyFiles(dir, candidates(dir, settleMs), stableMs, graceMs, log)) {
			const file = path.join(dir, name);
			const report = await ingestFile(file, { source: 'inbox', originalName: name, k, onProgress: (p) => opts.onProgress?.(name, p) });
			let written: unknown = report;
			if (report.status === 'duplicate' && report.duplicateOfFileId !== null) {
				// After a crash between commit and move this is the same file: keep the stored report beside it.
				const earlier = await k('ingest_files').where({ id: report.duplicateOfFileId }).first('report_json');
				written = { ...report, earlierReport: earlier?.report_json ? JSON.parse(earlier.report_json) : null };
			}
			const dest = await destinationFor(k, report, name);
			if (dest === null) {
				log(`inbox: ${name}: ${report.summary} (left in the inbox for another attempt)`);
				out.push({ name, movedTo: null, report });
				continue;
			}
			const destDir = path.join(dir, dest);
			const final = freeName(destDir, name);
			writeAtomic(path.join(destDir, `${final}.report.json`), JSON.stringify(written, null, 2) + '\n');
			fs.renameSync(file, path.join(destDir, final));
			log(`inbox: ${name} → ${dest}/${final}: ${report.summary}`);
			out.push({ name, movedTo: path.join(destDir, final), report });
		}
	} finally {
		release();
	}
	return out;
}

// Alone: process once and exit (used by the crash test and for manual runs).
if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
	const progress = process.argv.includes('--progress');
	yieldToWebServer();
	(async () => {
		await migrateLatest();
		await runInbox({
			settleMs: Number(process.env.LOCKSTEP_INBOX_SETTLE_MS ?? 5000),
			onProgress: progress ? (name, p) => console.log(`progress ${name} ${p.phase} ${p.rows}`) : undefined
		});
	})()
		.catch((e) => {
			console.error(e);
			process.exitCode = 1;
		})
		.finally(() => closeDb());
}
