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

export function spoolDir(): string {
	const dir = path.join(config.dataDir, 'tmp', 'ingest');
	fs.mkdirSync(dir, { recursive: true });
	return dir;
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
		input.destroy();
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
