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
		for await (const chunk of input as AsyncIterable<Buffer>) {
			const buf = Buffer.isBuffer(chunk) ? chunk : Buffer.from(chunk);
			inspector.update(buf);
			done += buf.length;
			opts.onBytes?.(done);
			if (!out.write(buf)) await new Promise<void>((r) => out.once('drain', () => r()));
		}
		await new Promise<void>((resolve, reject) => out.end((err?: Error | null) => (err ? reject(err) : resolve())));
		return { path: p, info: inspector.finish() };
	} catch (e) {
		input.destroy();
		out.destroy();
		await fs.promises.rm(p, { force: true });
		throw e;
	}
}
