/**
 * JSON input for the API: an array of row objects, or { rows: [...] }, with the same fields as the CSV
 * columns. The first row's keys are the header; "line" in messages is the row's 1-based position.
 */
import { clip, IngestFileError } from './errors.ts';
import type { FileWriter } from './writer.ts';

function cell(v: unknown): string {
	if (v === null || v === undefined) return '';
	if (typeof v === 'string') return v;
	if (typeof v === 'number') return String(v);
	if (typeof v !== 'object') return String(v);
	// An object or array is never a valid cell; a deeply nested one would overflow JSON.stringify's stack.
	try {
		return clip(JSON.stringify(v));
	} catch {
		return Array.isArray(v) ? '[…]' : '{…}';
	}
}

/** Where JSON.parse stopped, as line and column of the text (V8 reports a character position). */
function locateJsonError(text: string, message: string): { line: number | null; column: string | null } {
	const m = /position (\d+)/.exec(message);
	if (!m) return { line: null, column: null };
	const pos = Number(m[1]);
	const before = text.slice(0, pos);
	const line = before.split('\n').length;
	return { line, column: `character ${pos - before.lastIndexOf('\n')}` };
}

/**
 * Deepest nesting a body may have: `{ "rows": [ { … } ] }` needs 3, and a cell is never an object or
 * array. A body nested millions deep held the event loop for seconds inside JSON.parse (issue 13); the
 * scan below refuses it first, in slices with a yield between them. Own loop rather than a package: a
 * bracket counter that skips strings is a few lines.
 */
export const MAX_JSON_DEPTH = 32;
const SCAN_SLICE = 1 << 20;

export async function checkJsonDepth(text: string, max = MAX_JSON_DEPTH): Promise<void> {
	let depth = 0;
	let inString = false;
	for (let start = 0; start < text.length; start += SCAN_SLICE) {
		const end = Math.min(text.length, start + SCAN_SLICE);
		for (let i = start; i < end; i++) {
			const c = text.charCodeAt(i);
			if (inString) {
				if (c === 92) i++; // backslash: skip the escaped character
				else if (c === 34) inString = false;
			} else if (c === 34) inString = true;
			else if (c === 91 || c === 123) {
				if (++depth > max) {
					const before = text.slice(Math.max(0, i - 200_000), i);
					const line = text.slice(0, i).split('\n').length;
					throw new IngestFileError(
						`The JSON body is nested more than ${max} levels deep (at character ${i + 1}): a body needs 3 — an array of rows (objects), or { "rows": [ … ] } — and a cell holds a number or text.`,
						{ line, column: `character ${i - before.lastIndexOf('\n')}` }
					);
				}
			} else if (c === 93 || c === 125) depth--;
		}
		if (end < text.length) await new Promise<void>((r) => setImmediate(r));
	}
}

export function parseJsonRows(text: string): Record<string, unknown>[] {
	let body: unknown;
	try {
		body = JSON.parse(text.replace(/^\uFEFF/, ''));
	} catch (e) {
		const msg = e instanceof Error ? e.message : String(e);
		throw new IngestFileError(`The body is not valid JSON: ${msg}`, locateJsonError(text, msg));
	}
	const rows = Array.isArray(body) ? body : body && typeof body === 'object' && Array.isArray((body as { rows?: unknown }).rows) ? (body as { rows: unknown[] }).rows : null;
	if (!rows) throw new IngestFileError('The JSON body must be an array of rows or an object { "rows": [ … ] }.');
	if (rows.length === 0) throw new IngestFileError('The JSON body has no rows.');
	rows.forEach((r, i) => {
		if (!r || typeof r !== 'object' || Array.isArray(r))
			throw new IngestFileError(`Row ${i + 1} is not an object of column → value.`, { line: i + 1 });
	});
	return rows as Record<string, unknown>[];
}

export async function feedJsonRows(rows: Record<string, unknown>[], writer: FileWriter): Promise<void> {
	const header = Object.keys(rows[0]);
	writer.setHeader(header);
	const known = new Set(header);
	for (let i = 0; i < rows.length; i++) {
		const r = rows[i];
		const keys = Object.keys(r);
		const extra = keys.filter((k) => !known.has(k));
		const missing = header.filter((k) => !(k in r));
		if (extra.length || missing.length) {
			const parts = [];
			if (missing.length) parts.push(`lacks ${missing.slice(0, 8).join(', ')}`);
			if (extra.length) parts.push(`has fields the first row lacks: ${extra.slice(0, 8).join(', ')}`);
			const p = writer.rejectRow(i + 1, `Row ${i + 1} ${parts.join('; ')} (every row needs the first row's fields).`);
			if (p) await p;
			continue;
		}
		const p = writer.row(header.map((k) => cell(r[k])), i + 1);
		if (p) await p;
	}
}
