/**
 * HTTP bodies are written to a temporary file (with the byte checks made on the way) before the
 * pipeline reads them, so the database transaction never waits on a slow client, and an over-size or
 * binary body is refused while it streams in — before any of it is parsed.
 */
import { randomBytes } from 'node:crypto';
import fs from 'node:fs';
import path from 'node:path';
import type { Readable } from 'node:stream';
import { config } from '../config.ts';
import { ByteInspector, type InspectResult } from './bytes.ts';
import { IngestFileError } from './errors.ts';

const spoolRoot = () => path.join(config.dataDir, 'tmp', 'ingest');

/**
 * This process's folder for spooled uploads and staged rows: one per process id, so a process sweeping
 * at its start (sweepSpool) never removes a file another live process is using.
 */
export function spoolDir(): string {
	const dir = path.join(spoolRoot(), String(process.pid));
	fs.mkdirSync(dir, { recursive: true });
	return dir;
}

function alive(pid: number): boolean {
	try {
		process.kill(pid, 0);
		return true;
	} catch (e) {
		return (e as NodeJS.ErrnoException).code === 'EPERM';
	}
}

/**
 * Remove what killed processes left in the spool (uploads cut off by a crash, staged rows of an
 * interrupted ingest): the folders of processes no longer running, and loose files of the older
 * one-folder layout not touched for an hour. Called when the web server and the inbox job start.
 * @returns the number of files removed
 */
export function sweepSpool(): number {
	const root = spoolRoot();
	if (!fs.existsSync(root)) return 0;
	let removed = 0;
	for (const e of fs.readdirSync(root, { withFileTypes: true })) {
		const p = path.join(root, e.name);
		if (e.isDirectory() && /^\d+$/.test(e.name)) {
			const pid = Number(e.name);
			if (pid === process.pid || alive(pid)) continue;
			removed += fs.readdirSync(p).length;
			fs.rmSync(p, { recursive: true, force: true });
		} else if (e.isFile() && Date.now() - fs.statSync(p).mtimeMs > 3_600_000) {
			fs.rmSync(p, { force: true });
			removed++;
		}
	}
	return removed;
}

export async function writeTemp(data: Buffer, ext: string): Promise<string> {
	const p = path.join(spoolDir(), `${randomBytes(12).toString('hex')}${ext}`);
	await fs.promises.writeFile(p, data);
	return p;
}

/**
 * Copy a stream to a temporary file, checking size, NUL bytes, UTF-8 and line length as it goes.
 * @throws IngestFileError at the first problem (the partial file is removed)
 */
export async function spoolStream(
	input: Readable,
	opts: { limitBytes: number; maxLineBytes: number; name: string; ext: string; onBytes?: (n: number) => void }
): Promise<{ path: string; info: InspectResult }> {
	const p = path.join(spoolDir(), `${randomBytes(12).toString('hex')}${opts.ext}`);
	const inspector = new ByteInspector(opts);
	const out = fs.createWriteStream(p);
	let done = 0;
	try {
		// destroyOnReturn: false keeps the body readable after a refusal, so the rest can be drained below.
		for await (const chunk of input.iterator({ destroyOnReturn: false }) as AsyncIterable<Buffer>) {
			const buf = Buffer.isBuffer(chunk) ? chunk : Buffer.from(chunk);
			inspector.update(buf);
			done += buf.length;
			opts.onBytes?.(done);
			if (!out.write(buf)) await new Promise<void>((r) => out.once('drain', () => r()));
		}
		await new Promise<void>((resolve, reject) => out.end((err?: Error | null) => (err ? reject(err) : resolve())));
		return { path: p, info: inspector.finish() };
	} catch (e) {
		out.destroy();
		await fs.promises.rm(p, { force: true });
		// A body refused for its content (binary, encoding, an over-long line) is read to its end, up to
		// the size limit, so the client gets the located answer instead of a connection reset mid-send.
		if (e instanceof IngestFileError && e.kind === 'input') await drain(input, opts.limitBytes - done);
		// The rest is left unread, never destroyed: destroying the body resets the connection, and a
		// client still sending (a chunked upload past the size limit) saw a reset instead of the 413
		// (issue 13). Node's server discards what is still sent once the answer is out (bounded by its
		// requestTimeout) and the client reads the answer.
		throw e;
	}
}

/** Read and discard up to `maxBytes` more of a stream; stops early (the caller destroys it) beyond that. */
async function drain(input: Readable, maxBytes: number): Promise<void> {
	let left = maxBytes;
	try {
		for await (const chunk of input as AsyncIterable<Buffer>) {
			left -= chunk.length;
			if (left < 0) return;
		}
	} catch {
		/* the client went away: nothing to answer */
	}
}
