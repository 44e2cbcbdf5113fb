/**
 * Read a wafer-summary CSV from disk and feed its records to a FileWriter, chunk by chunk.
 *
 * Papa.Parser (papaparse's own record parser, the one its stream readers use) parses each chunk
 * synchronously, leaving the incomplete last record for the next chunk. Driving it here rather than
 * through Papa.parse(stream, { step }) keeps back-pressure with the database writes in plain
 * async/await, and keeps papaparse's quote errors, which its Node duplex stream drops. Line numbers are
 * physical lines: a record counts 1 plus the line breaks inside its quoted fields.
 */
import fs from 'node:fs';
import { StringDecoder } from 'node:string_decoder';
import Papa from 'papaparse';
import { IngestFileError } from './errors.ts';
import { MAX_LINE_BYTES } from './limits.ts';
import type { FileWriter } from './writer.ts';

export interface ReadProgress {
	bytesDone: number;
	rows: number;
}

export async function readCsvFile(
	filePath: string,
	writer: FileWriter,
	opts: { hasBom: boolean; maxLineBytes?: number; onChunk?: (p: ReadProgress) => void }
): Promise<void> {
	const maxRecord = opts.maxLineBytes ?? MAX_LINE_BYTES;
	// 128 KB chunks: one chunk is parsed synchronously, and a chunk of short lines holds thousands of
	// records; smaller chunks keep each parse short (the event loop is never held ~100 ms).
	const stream = fs.createReadStream(filePath, { highWaterMark: 128 * 1024, start: opts.hasBom ? 3 : 0 });
	const decoder = new StringDecoder('utf8');
	let partial = '';
	let newline: '\n' | '\r\n' | null = null;
	let line = 1;
	let headerSeen = false;
	let leadingBlank = false;
	let bytesDone = opts.hasBom ? 3 : 0;

	const feed = async (input: string, last: boolean): Promise<void> => {
		if (newline === null) {
			const nl = input.indexOf('\n');
			if (nl < 0 && !last) {
				partial = input;
				return;
			}
			newline = nl > 0 && input[nl - 1] === '\r' ? '\r\n' : '\n';
		}
		const parser = new Papa.Parser({ delimiter: ',', newline, quoteChar: '"' });
		const res = parser.parse(input, 0, !last) as Papa.ParseResult<string[]>;
		partial = last ? '' : input.substring(res.meta.cursor);
		if (partial.length > maxRecord)
			throw new IngestFileError(
				`The record starting on line ${line + res.data.length} runs past ${maxRecord} characters: a quoted field is probably never closed.`,
				{ line: line + res.data.length }
			);
		const quoteErrors = new Map<number, Papa.ParseError>();
		for (const e of res.errors) if (e.row !== undefined) quoteErrors.set(e.row, e);
		const mayHaveBreaks = input.indexOf('"') >= 0;
		for (let i = 0; i < res.data.length; i++) {
			const fields = res.data[i];
			const at = line;
			if (mayHaveBreaks) for (const f of fields) for (let p = f.indexOf('\n'); p >= 0; p = f.indexOf('\n', p + 1)) line++;
			line++;
			// With LF line ends a CR before the newline stays in the last field: drop it (mixed line ends).
			const lastField = fields[fields.length - 1];
			if (newline === '\n' && lastField.endsWith('\r')) fields[fields.length - 1] = lastField.slice(0, -1);
			const blank = fields.length === 1 && fields[0].trim() === '';
			if (!headerSeen) {
				if (blank) {
					leadingBlank = true; // a file of nothing but blank lines is "empty", below
					continue;
				}
				if (leadingBlank) throw new IngestFileError('Line 1 is empty: the first line must be the header.', { line: 1 });
				const e = quoteErrors.get(i);
				if (e) throw new IngestFileError(`The header's quotes are malformed (${e.message}).`, { line: at });
				writer.setHeader(fields);
				headerSeen = true;
				continue;
			}
			if (blank) continue;
			const e = quoteErrors.get(i);
			if (e?.code === 'MissingQuotes')
				throw new IngestFileError(`A quoted field opened on line ${at} is never closed.`, { line: at });
			const p = e ? writer.rejectRow(at, `The line's quotes are malformed: ${e.message}.`, fields.join(',')) : writer.row(fields, at);
			if (p) await p;
		}
	};

	for await (const buf of stream as AsyncIterable<Buffer>) {
		bytesDone += buf.length;
		await feed(partial + decoder.write(buf), false);
		opts.onChunk?.({ bytesDone, rows: writer.stats.rows.total });
	}
	await feed(partial + decoder.end(), true);
	if (!headerSeen) throw new IngestFileError('The file is empty: it has no header row.', { line: 1 });
	if (writer.stats.rows.total === 0)
		throw new IngestFileError('The file has a header but no data rows.', { line: 2 });
}
