/**
 * The one ingest pipeline behind the inbox job, the upload page and the tool-host API.
 *
 * Crash safety: a file's `ingest_files` row, its wafer-steps, their scores and its rejections are
 * written in ONE transaction, which commits only after the last row is read. A crash at any point
 * leaves nothing of the file in the database (SQLite rolls an uncommitted transaction back when it
 * reopens), so reprocessing the same input after a restart ends in the state an uninterrupted run
 * would have. Rows are still written and scored in batches as they stream in, so memory stays flat.
 * The transaction's length is bounded by CPU, not by a client's upload speed: HTTP bodies are spooled
 * to a temporary file first (see spool.ts).
 *
 * Idempotency: a file whose SHA-256 matches an earlier file that was stored completely (no rejected
 * row) is a no-op; a wafer × recipe step already stored is counted as a duplicate and left unchanged.
 */
import fs from 'node:fs';
import path from 'node:path';
import type { Knex } from 'knex';
import { config } from '../config.ts';
import { db } from '../db.ts';
import type { Role } from '../roles.ts';
import { now } from '../time.ts';
import { ByteInspector, type InspectResult, formatBytes } from './bytes.ts';
import { getSetting } from '../settings.ts';
import { readCsvFile } from './csv.ts';
import { IngestFileError } from './errors.ts';
import { feedJsonRows, parseJsonRows } from './json.ts';
import { JSON_LIMIT_BYTES, MAX_LINE_BYTES } from './limits.ts';
import { summarise, type IngestReport, type IngestSource, type Rejection } from './report.ts';
import { FileWriter, type WriterStats } from './writer.ts';

export interface IngestProgress {
	phase: 'checking' | 'processing' | 'done';
	bytesDone: number;
	bytesTotal: number;
	rows: number;
}

export interface IngestOptions {
	source: IngestSource;
	/** the name the file had where it came from (shown in reports); defaults to the path's base name */
	originalName?: string;
	submittedBy?: string | null;
	submitterRole?: Role | null;
	apiTokenId?: number | null;
	/**
	 * Register chambers the file names but the fab lacks. Default: only when the submitter is an admin
	 * and the admin's ingest policy says `auto_register_for_admins`.
	 */
	registerUnknownChambers?: boolean;
	/** default: by extension (.json → json, anything else → csv) */
	format?: 'csv' | 'json';
	/** default config.uploadLimitBytes */
	limitBytes?: number;
	/** default MAX_LINE_BYTES */
	maxLineBytes?: number;
	/** default config.futureToleranceMs */
	futureToleranceMs?: number;
	onProgress?: (p: IngestProgress) => void;
	/** byte checks already made (the spooled upload): skips the first read */
	inspected?: InspectResult;
	k?: Knex;
}

class DuplicateFile extends Error {
	constructor(readonly fileId: number) {
		super('duplicate file');
	}
}

export interface Base {
	fileName: string;
	source: IngestSource;
	sha256: string;
	sizeBytes: number;
	receivedAt: number;
}

const emptyStats = (): WriterStats => ({
	rows: { total: 0, accepted: 0, rejected: 0, duplicate: 0 },
	waferSteps: { scored: 0, noBaseline: 0 },
	alarmsOpened: [],
	created: { recipes: [], recipeSteps: [], chambers: [] },
	rejections: [],
	rejectionsTotal: 0,
	duplicates: []
});

function makeReport(base: Base, status: IngestReport['status'], stats: WriterStats, extra: Partial<IngestReport> = {}): IngestReport {
	const finishedAt = now();
	const r: IngestReport = {
		fileId: null,
		...base,
		status,
		summary: '',
		duplicateOfFileId: null,
		rows: stats.rows,
		waferSteps: stats.waferSteps,
		alarmsOpened: stats.alarmsOpened,
		created: stats.created,
		rejections: stats.rejections,
		rejectionsTotal: stats.rejectionsTotal,
		duplicates: stats.duplicates,
		fileError: null,
		finishedAt,
		durationMs: finishedAt - base.receivedAt,
		...extra
	};
	r.summary = summarise(r);
	return r;
}

/** Read a file once for its SHA-256 and the byte-level checks. */
export async function inspectFile(filePath: string, opts: { limitBytes: number; maxLineBytes: number; name: string; onBytes?: (n: number) => void }): Promise<InspectResult> {
	const size = (await fs.promises.stat(filePath)).size;
	if (size > opts.limitBytes)
		throw new IngestFileError(`${opts.name} is ${formatBytes(size)}, larger than the limit of ${formatBytes(opts.limitBytes)}; split it into smaller files.`, {
			value: `${size} bytes`
		}, 'size');
	const inspector = new ByteInspector(opts);
	let done = 0;
	for await (const chunk of fs.createReadStream(filePath, { highWaterMark: 1 << 20 }) as AsyncIterable<Buffer>) {
		inspector.update(chunk);
		done += chunk.length;
		opts.onBytes?.(done);
	}
	return inspector.finish();
}

/** Ingest a file on disk (CSV or JSON). Never throws for bad input: the report says what happened. */
export async function ingestFile(filePath: string, opts: IngestOptions): Promise<IngestReport> {
	const k = opts.k ?? db();
	const receivedAt = now();
	const fileName = (opts.originalName ?? path.basename(filePath)).slice(0, 255);
	const format = opts.format ?? (fileName.toLowerCase().endsWith('.json') ? 'json' : 'csv');
	const limitBytes = Math.min(opts.limitBytes ?? config.uploadLimitBytes, format === 'json' ? JSON_LIMIT_BYTES : Infinity);
	const maxLineBytes = opts.maxLineBytes ?? MAX_LINE_BYTES;
	const progress = opts.onProgress ?? (() => {});
	let base: Base = { fileName, source: opts.source, sha256: '', sizeBytes: 0, receivedAt };

	let info: InspectResult;
	try {
		const total = opts.inspected?.sizeBytes ?? (await fs.promises.stat(filePath)).size;
		base.sizeBytes = total;
		info =
			opts.inspected ??
			(await inspectFile(filePath, {
				limitBytes,
				maxLineBytes,
				name: fileName,
				onBytes: (n) => progress({ phase: 'checking', bytesDone: n, bytesTotal: total, rows: 0 })
			}));
		if (opts.inspected && info.sizeBytes > limitBytes)
			throw new IngestFileError(`${fileName} is ${formatBytes(info.sizeBytes)}, larger than the limit of ${formatBytes(limitBytes)}.`, {}, 'size');
	} catch (e) {
		if (e instanceof IngestFileError) return recordRefused(k, base, opts, e);
		throw e;
	}
	base = { ...base, sha256: info.sha256, sizeBytes: info.sizeBytes };

	const earlier = await findCompleteFile(k, info.sha256);
	if (earlier !== null) return duplicateReport(base, earlier);

	const register =
		opts.registerUnknownChambers ??
		(opts.submitterRole === 'admin' && (await getSetting('ingest_policy', k)).unknownChamber === 'auto_register_for_admins');
	const futureToleranceMs = opts.futureToleranceMs ?? config.futureToleranceMs;

	let jsonRows: Record<string, unknown>[] | null = null;
	try {
		if (format === 'json') jsonRows = parseJsonRows(await fs.promises.readFile(filePath, 'utf8'));
	} catch (e) {
		if (e instanceof IngestFileError) return recordRefused(k, base, opts, e);
		throw e;
	}

	try {
		return await k.transaction(async (trx) => {
			// The INSERT comes first so this transaction holds SQLite's write lock from its start: two
			// processes ingesting at once then queue instead of failing on a stale read snapshot.
			const [row] = await trx('ingest_files')
				.insert({
					source: opts.source,
					original_name: fileName,
					sha256: info.sha256,
					size_bytes: info.sizeBytes,
					status: 'processing',
					received_at: receivedAt,
					submitted_by: opts.submittedBy ?? null,
					api_token_id: opts.apiTokenId ?? null
				})
				.returning('id');
			const fileId = Number(typeof row === 'object' ? row.id : row);
			const again = await findCompleteFile(trx, info.sha256);
			if (again !== null) throw new DuplicateFile(again);
			const writer = new FileWriter(trx, { fileId, registerUnknownChambers: register, futureToleranceMs, receivedAt, unit: format === 'json' ? 'row' : 'line' });
			if (jsonRows) await feedJsonRows(jsonRows, writer);
			else
				await readCsvFile(filePath, writer, {
					hasBom: info.hasBom,
					maxLineBytes,
					onChunk: (p) => progress({ phase: 'processing', bytesDone: p.bytesDone, bytesTotal: info.sizeBytes, rows: p.rows })
				});
			const stats = await writer.finish();
			const report = makeReport(base, 'done', stats, { fileId });
			await trx('ingest_files')
				.where({ id: fileId })
				.update({
					status: 'done',
					finished_at: report.finishedAt,
					rows_total: stats.rows.total,
					rows_accepted: stats.rows.accepted,
					rows_rejected: stats.rows.rejected,
					rows_duplicate: stats.rows.duplicate,
					report_json: JSON.stringify(report)
				});
			progress({ phase: 'done', bytesDone: info.sizeBytes, bytesTotal: info.sizeBytes, rows: stats.rows.total });
			return report;
		});
	} catch (e) {
		if (e instanceof DuplicateFile) return duplicateReport(base, e.fileId);
		if (e instanceof IngestFileError) return recordRefused(k, base, opts, e);
		return recordFailed(k, base, opts, e);
	}
}

/** The id of an earlier file with these bytes that was stored completely, or null. */
async function findCompleteFile(k: Knex, sha256: string): Promise<number | null> {
	const r = await k('ingest_files').where({ sha256, status: 'done', rows_rejected: 0 }).orderBy('id').first('id');
	return r ? Number(r.id) : null;
}

function duplicateReport(base: Base, fileId: number): IngestReport {
	return makeReport(base, 'duplicate', emptyStats(), { duplicateOfFileId: fileId });
}

function fileRow(base: Base, opts: IngestOptions, status: 'rejected' | 'failed', report: IngestReport) {
	return {
		source: opts.source,
		original_name: base.fileName,
		sha256: base.sha256,
		size_bytes: base.sizeBytes,
		status,
		received_at: base.receivedAt,
		finished_at: report.finishedAt,
		report_json: JSON.stringify(report),
		submitted_by: opts.submittedBy ?? null,
		api_token_id: opts.apiTokenId ?? null
	};
}

/** A refused file is recorded (status rejected) with its one located error; nothing else from it. */
export async function recordRefused(k: Knex = db(), base: Base, opts: IngestOptions, e: IngestFileError): Promise<IngestReport> {
	const fileError: Rejection = { line: e.location.line ?? 0, column: e.location.column, value: e.location.value, reason: e.message, kind: e.kind };
	const report = makeReport(base, 'rejected', emptyStats(), { fileError });
	return k.transaction(async (trx) => {
		const [row] = await trx('ingest_files').insert(fileRow(base, opts, 'rejected', report)).returning('id');
		const fileId = Number(typeof row === 'object' ? row.id : row);
		await trx('ingest_rejections').insert({ ingest_file_id: fileId, line: fileError.line, column: fileError.column, value: fileError.value, reason: fileError.reason });
		const withId = { ...report, fileId };
		await trx('ingest_files').where({ id: fileId }).update({ report_json: JSON.stringify(withId) });
		return withId;
	});
}

/** An internal failure: nothing of the file was kept; record the attempt when the database still answers. */
async function recordFailed(k: Knex, base: Base, opts: IngestOptions, e: unknown): Promise<IngestReport> {
	const reason = e instanceof Error ? e.message : String(e);
	const report = makeReport(base, 'failed', emptyStats(), { fileError: { line: 0, column: null, value: null, reason } });
	try {
		const [row] = await k('ingest_files').insert(fileRow(base, opts, 'failed', report)).returning('id');
		report.fileId = Number(typeof row === 'object' ? row.id : row);
	} catch {
		/* the database itself is the problem: the caller logs the report */
	}
	console.error(`ingest of ${base.fileName} failed:`, e);
	return report;
}

/** Ingest rows already in memory (JSON-shaped), e.g. from a script. */
export async function ingestRows(rows: Record<string, unknown>[], opts: IngestOptions & { originalName: string }): Promise<IngestReport> {
	const { writeTemp } = await import('./spool.ts');
	const tmp = await writeTemp(Buffer.from(JSON.stringify(rows)), '.json');
	try {
		return await ingestFile(tmp, { ...opts, format: 'json' });
	} finally {
		await fs.promises.rm(tmp, { force: true });
	}
}
