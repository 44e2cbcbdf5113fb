/**
 * Byte-level checks made while a file streams past, before any of it is parsed: size, SHA-256, NUL
 * bytes and invalid UTF-8 (a binary or UTF-16 file), over-long lines. Used when an upload is spooled to
 * disk and when a file already on disk is read for the first time, so every way in refuses the same
 * files with the same located message.
 */
import { createHash, type Hash } from 'node:crypto';
import { isUtf8 } from 'node:buffer';
import { IngestFileError } from './errors.ts';

export interface InspectResult {
	sha256: string;
	sizeBytes: number;
	/** physical lines (a last line without a newline counts) */
	lines: number;
	hasBom: boolean;
}

export class ByteInspector {
	private readonly hash: Hash = createHash('sha256');
	private size = 0;
	private line = 1;
	private lineBytes = 0;
	private carry: Buffer = Buffer.alloc(0);
	private first = true;
	private bom = false;
	private sawNonEmpty = false;

	constructor(
		private readonly opts: { limitBytes: number; maxLineBytes: number; name: string }
	) {}

	/** Feed the next chunk; throws IngestFileError at the first problem. */
	update(chunk: Buffer): void {
		this.size += chunk.length;
		if (this.size > this.opts.limitBytes)
			throw new IngestFileError(
				`${this.opts.name} is larger than the limit of ${formatBytes(this.opts.limitBytes)}; split it into smaller files.`,
				{ value: `more than ${this.opts.limitBytes} bytes` },
				'size'
			);
		this.hash.update(chunk);
		if (this.first && chunk.length > 0) {
			this.first = false;
			if ((chunk[0] === 0xff && chunk[1] === 0xfe) || (chunk[0] === 0xfe && chunk[1] === 0xff))
				throw new IngestFileError('The file is UTF-16 encoded; save it as UTF-8.', { line: 1 });
			this.bom = chunk[0] === 0xef && chunk[1] === 0xbb && chunk[2] === 0xbf;
		}
		const nul = chunk.indexOf(0);
		if (nul >= 0) {
			const at = this.locate(chunk, nul);
			throw new IngestFileError('The file holds NUL bytes: it is a binary file, not a UTF-8 CSV text.', { line: at.line, column: `byte ${at.col}` });
		}
		this.checkUtf8(chunk);
		let pos = 0;
		for (;;) {
			const nl = chunk.indexOf(10, pos);
			const end = nl < 0 ? chunk.length : nl;
			this.lineBytes += end - pos;
			if (!this.sawNonEmpty && end > pos) this.sawNonEmpty = true;
			if (this.lineBytes > this.opts.maxLineBytes)
				throw new IngestFileError(`Line ${this.line} is longer than ${formatBytes(this.opts.maxLineBytes)}.`, { line: this.line });
			if (nl < 0) break;
			this.line++;
			this.lineBytes = 0;
			pos = nl + 1;
		}
	}

	finish(): InspectResult {
		if (this.carry.length > 0)
			throw new IngestFileError('The file ends inside a multi-byte character: it is not valid UTF-8.', { line: this.line });
		return { sha256: this.hash.digest('hex'), sizeBytes: this.size, lines: this.lineBytes > 0 ? this.line : this.line - 1, hasBom: this.bom };
	}

	/** Validate UTF-8 across chunk boundaries: an incomplete character at the end waits for the next chunk. */
	private checkUtf8(chunk: Buffer): void {
		const data = this.carry.length ? Buffer.concat([this.carry, chunk]) : chunk;
		let cut = data.length;
		// Back up over at most 3 continuation bytes to the start of the last character.
		for (let i = data.length - 1, n = 0; i >= 0 && n < 4; i--, n++) {
			const b = data[i];
			if ((b & 0xc0) !== 0x80) {
				const need = b < 0x80 ? 1 : (b & 0xe0) === 0xc0 ? 2 : (b & 0xf0) === 0xe0 ? 3 : (b & 0xf8) === 0xf0 ? 4 : 1;
				if (data.length - i < need) cut = i;
				break;
			}
		}
		const whole = cut === data.length ? data : data.subarray(0, cut);
		if (!isUtf8(whole)) {
			// Find the first bad line for the message (rare path, so a slow scan is fine).
			let start = 0;
			let line = this.line;
			for (;;) {
				const nl = whole.indexOf(10, start);
				const end = nl < 0 ? whole.length : nl;
				if (!isUtf8(whole.subarray(start, end))) break;
				if (nl < 0) break;
				line++;
				start = nl + 1;
			}
			throw new IngestFileError('The file is not valid UTF-8 text (a binary file, or another encoding): save it as UTF-8.', { line });
		}
		this.carry = Buffer.from(data.subarray(cut));
	}

	private locate(chunk: Buffer, index: number): { line: number; col: number } {
		let line = this.line;
		let lineStart = -1;
		for (let p = chunk.indexOf(10); p >= 0 && p < index; p = chunk.indexOf(10, p + 1)) {
			line++;
			lineStart = p;
		}
		const col = lineStart < 0 ? this.lineBytes + index + 1 : index - lineStart;
		return { line, col };
	}

	get empty(): boolean {
		return !this.sawNonEmpty;
	}
}

export function formatBytes(n: number): string {
	if (n >= 1024 * 1024) return `${+(n / 1024 / 1024).toFixed(1)} MB`;
	if (n >= 1024) return `${+(n / 1024).toFixed(1)} kB`;
	return `${n} bytes`;
}
