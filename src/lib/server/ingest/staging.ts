/**
 * The staged rows of a file being read: validated, packed rows written to a temporary file in the
 * data folder while the file is read (no database lock held), then read back in batches by the
 * publishing transaction (pipeline.ts). A temporary file rather than memory: a 200 MB input stages about
 * as many bytes, and memory stays flat. A crash leaves the file behind; spool.ts sweeps the folder when
 * a process starts.
 *
 * Frame per row: u32 meta length, u32 values length (bytes), meta (UTF-8 JSON), values (float64, LE).
 * Own code rather than a package: fixed two-field frames need no serialisation library.
 */
import fs from 'node:fs';
import { once } from 'node:events';

export interface StagedMeta {
	line: number;
	waferId: string;
	lotId: string;
	recipe: string;
	step: string;
	/** a chamber id, or a negative placeholder for a chamber registered when the file is published */
	chamberId: number;
	chamberCode: string;
	planKey: string;
	processedAt: number;
	slot: number | null;
	rfOn: number | null;
}

export interface StagedRow extends StagedMeta {
	values: Float64Array;
}

export class StagingFile {
	private readonly out: fs.WriteStream;
	private closed = false;
	rows = 0;

	constructor(readonly path: string) {
		this.out = fs.createWriteStream(path, { flags: 'wx' });
	}

	/** Append rows; resolves once the stream can take more (back-pressure). */
	async append(rows: StagedRow[]): Promise<void> {
		let ok = true;
		for (const r of rows) {
			const { values, ...meta } = r;
			const m = Buffer.from(JSON.stringify(meta));
			const head = Buffer.allocUnsafe(8);
			head.writeUInt32LE(m.length, 0);
			head.writeUInt32LE(values.byteLength, 4);
			ok = this.out.write(Buffer.concat([head, m, Buffer.from(values.buffer, values.byteOffset, values.byteLength)]));
			this.rows++;
		}
		if (!ok) await once(this.out, 'drain');
	}

	async close(): Promise<void> {
		if (this.closed) return;
		this.closed = true;
		await new Promise<void>((resolve, reject) => this.out.end((err?: Error | null) => (err ? reject(err) : resolve())));
	}

	/** Read the rows back in order, `batch` at a time. */
	async *batches(batch: number): AsyncGenerator<StagedRow[]> {
		await this.close();
		let pending: Buffer = Buffer.alloc(0);
		let rows: StagedRow[] = [];
		for await (const chunk of fs.createReadStream(this.path, { highWaterMark: 1 << 20 }) as AsyncIterable<Buffer>) {
			pending = pending.length ? Buffer.concat([pending, chunk]) : chunk;
			let at = 0;
			while (pending.length - at >= 8) {
				const ml = pending.readUInt32LE(at);
				const vl = pending.readUInt32LE(at + 4);
				if (pending.length - at < 8 + ml + vl) break;
				const meta = JSON.parse(pending.toString('utf8', at + 8, at + 8 + ml)) as StagedMeta;
				const values = new Float64Array(vl / 8);
				new Uint8Array(values.buffer).set(pending.subarray(at + 8 + ml, at + 8 + ml + vl));
				rows.push({ ...meta, values });
				at += 8 + ml + vl;
				if (rows.length >= batch) {
					yield rows;
					rows = [];
				}
			}
			pending = pending.subarray(at);
		}
		if (pending.length) throw new Error(`staged rows of ${this.path} end in a partial frame`);
		if (rows.length) yield rows;
	}

	async remove(): Promise<void> {
		if (!this.closed) {
			this.closed = true;
			this.out.destroy();
		}
		await fs.promises.rm(this.path, { force: true });
	}
}
