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
 * when complete; files modified in the last `settleMs` are also left for the next run.
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
		for (const name of candidates(dir, opts.settleMs ?? 5000)) {
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
