/**
 * The one ingest pipeline behind the inbox job, the upload page and the tool-host API.
 *
 * Two phases (writer.ts):
 * 1. reading — the file is parsed and every row validated and packed, with read-only lookups; accepted
 *    rows are staged in a temporary file (staging.ts). No write lock is held, so the web server's
 *    writes (sign-ins, acknowledgements) are not held up however long the file is (issue 13). A file
 *    refused while it is read leaves nothing but its refusal record.
 * 2. publishing — a small file (≤ DIRECT_ROWS rows) in ONE transaction: its `ingest_files` row, its
 *    wafer-steps, their scores, the recipe steps and chambers they need, its kept rejections. A large
 *    file in short transactions: its row (`processing`) and what it creates; its rows copied into
 *    `ingest_staged_rows` a batch at a time; the flip — one INSERT … SELECT into wafer_steps with the
 *    status `done` — and then its scoring a batch at a time. Before the flip nothing of the file is
 *    visible; a crash before it is undone by `recoverInterruptedIngests` when the owning process starts
 *    (the inbox file is still in the inbox, an upload's client got no answer), a crash after it leaves
 *    a whole file whose scoring is finished then. Reprocessing the same input after a restart ends in
 *    the state an uninterrupted run would have. No transaction waits on parsing or on a client (HTTP
 *    bodies are spooled to a temporary file first, see spool.ts).
 *
 * Idempotency: a file whose SHA-256 matches an earlier file that was stored completely (no rejected
 * row) is a no-op; a wafer × recipe step already stored with the same content is counted as a
 * duplicate and left unchanged (other content is refused as a conflict, writer.ts). A file refused for
 * what its bytes say is remembered: the same bytes again get the same refusal without being read.
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
import { clip, IngestFileError } from './errors.ts';
import { checkJsonDepth, feedJsonRows, parseJsonRows } from './json.ts';
import { DIRECT_ROWS, JSON_LIMIT_BYTES, MAX_LINE_BYTES, REPORT_REJECTION_CAP } from './limits.ts';
import { CatalogChanged, undoCreated, type CreatedIds } from './catalog.ts';
import { spoolDir, writeTemp } from './spool.ts';
import { randomBytes } from 'node:crypto';
import { summarise, type IngestReport, type IngestSource, type Rejection } from './report.ts';
import { FileWriter, removeStaged, scoreFile, writeFirst, type WriterStats } from './writer.ts';

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
	rejectionCounts: [],
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
		rejectionCounts: stats.rejectionCounts,
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
	const refusedBefore = await findRefusal(k, info.sha256);
	if (refusedBefore) return repeatedRefusal(base, refusedBefore);

	const register =
		opts.registerUnknownChambers ??
		(opts.submitterRole === 'admin' && (await getSetting('ingest_policy', k)).unknownChamber === 'auto_register_for_admins');
	const futureToleranceMs = opts.futureToleranceMs ?? config.futureToleranceMs;

	let jsonRows: Record<string, unknown>[] | null = null;
	try {
		if (format === 'json') {
			const text = await fs.promises.readFile(filePath, 'utf8');
			await checkJsonDepth(text);
			jsonRows = parseJsonRows(text);
		}
	} catch (e) {
		if (e instanceof IngestFileError) return recordRefused(k, base, opts, e);
		throw e;
	}

	// A recipe step this file would create was created by another file between reading and publishing
	// (CatalogChanged): read the file again against the new catalog (rare; a few attempts).
	for (let attempt = 1; ; attempt++) {
		const writer = new FileWriter(k, {
			stagingPath: path.join(spoolDir(), `${randomBytes(12).toString('hex')}.stage`),
			registerUnknownChambers: register,
			futureToleranceMs,
			receivedAt,
			unit: format === 'json' ? 'row' : 'line'
		});
		try {
			// Phase 1: read, validate, stage — no write lock.
			if (jsonRows) await feedJsonRows(jsonRows, writer);
			else
				await readCsvFile(filePath, writer, {
					hasBom: info.hasBom,
					maxLineBytes,
					onChunk: (p) => progress({ phase: 'processing', bytesDone: p.bytesDone, bytesTotal: info.sizeBytes, rows: p.rows })
				});
			await writer.endOfInput();
			const recordFile = async (trx: Knex.Transaction): Promise<number> => {
				// The INSERT comes first so this transaction holds SQLite's write lock from its start: two
				// processes publishing at once then queue instead of failing on a stale read snapshot.
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
				const id = Number(typeof row === 'object' ? row.id : row);
				const again = await findCompleteFile(trx, info.sha256);
				if (again !== null) throw new DuplicateFile(again);
				await writer.prepare(trx);
				return id;
			};
			const finishFile = async (trx: Knex.Transaction, fileId: number, stats: WriterStats, staging: string | null): Promise<IngestReport> => {
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
						report_json: JSON.stringify(report),
						staging_json: staging
					});
				return report;
			};

			// Phase 2, a small file: one transaction, no longer than one batch of a large file's.
			if (writer.rowsRead <= DIRECT_ROWS) {
				const report = await k.transaction(async (trx) => {
					const fileId = await recordFile(trx);
					return finishFile(trx, fileId, await writer.publishDirect(trx, fileId), null);
				});
				progress({ phase: 'done', bytesDone: info.sizeBytes, bytesTotal: info.sizeBytes, rows: report.rows.total });
				return report;
			}

			// Phase 2, a large file: short transactions. The file's row says `processing` until the flip, so
			// an interrupted publish is undone when its process starts again (recoverInterruptedIngests).
			const fileId = await k.transaction(async (trx) => {
				const id = await recordFile(trx);
				await trx('ingest_files').where({ id }).update({ staging_json: JSON.stringify({ phase: 'staging', created: writer.createdIds }) });
				return id;
			});
			try {
				await writer.stageRows(k, fileId);
				const published = await k.transaction(async (trx) => {
					const stats = await writer.flip(trx, fileId);
					await finishFile(trx, fileId, stats, JSON.stringify({ phase: 'scoring' }));
					return stats;
				});
				progress({ phase: 'processing', bytesDone: info.sizeBytes, bytesTotal: info.sizeBytes, rows: published.rows.total });
				await removeStaged(k, fileId);
				await writer.scoreStaged(k, fileId);
				// anything the staged file did not cover (nothing, normally)
				const rest = await scoreFile(k, fileId);
				published.waferSteps.scored += rest.scored;
				published.waferSteps.noBaseline += rest.noBaseline;
				published.alarmsOpened.push(...rest.alarmsOpened);
				const report = makeReport(base, 'done', published, { fileId });
				await k('ingest_files').where({ id: fileId }).update({ finished_at: report.finishedAt, report_json: JSON.stringify(report), staging_json: null });
				progress({ phase: 'done', bytesDone: info.sizeBytes, bytesTotal: info.sizeBytes, rows: published.rows.total });
				return report;
			} catch (e) {
				// Not published (or published but not scored: then it stays and is scored on recovery).
				await undoUnpublished(k, fileId).catch(() => {});
				throw e;
			}
		} catch (e) {
			if (e instanceof CatalogChanged && attempt < 3) continue;
			if (e instanceof DuplicateFile) return duplicateReport(base, e.fileId);
			if (e instanceof IngestFileError) return recordRefused(k, base, opts, e);
			return recordFailed(k, base, opts, e);
		} finally {
			await writer.discard();
		}
	}
}

/**
 * Undo a publish that did not reach its flip: staged rows, what the file created, its row. A file past
 * its flip is left alone (stored whole; only its scoring may be pending).
 */
async function undoUnpublished(k: Knex, fileId: number): Promise<void> {
	await k.transaction(async (trx) => {
		await writeFirst(trx, fileId);
		const f = await trx('ingest_files').where({ id: fileId }).first('status', 'staging_json');
		if (!f || f.status !== 'processing') return;
		const staging = f.staging_json ? (JSON.parse(f.staging_json) as { created?: CreatedIds }) : {};
		await trx('ingest_staged_rows').where({ ingest_file_id: fileId }).delete();
		await trx('ingest_rejections').where({ ingest_file_id: fileId }).delete();
		await trx('ingest_files').where({ id: fileId }).delete();
		if (staging.created) await undoCreated(trx, staging.created);
	});
}

/**
 * At the start of the process that owns them (the web server: uploads and API; the inbox job: the
 * inbox), finish what an interrupted ingest left: a file not yet flipped is undone as if never sent (the
 * inbox file is still there, an upload's client got no answer); a flipped file's pending scoring is done.
 * @returns the files undone and the files whose scoring was finished
 */
export async function recoverInterruptedIngests(k: Knex, sources: IngestSource[]): Promise<{ undone: number; scored: number }> {
	const out = { undone: 0, scored: 0 };
	const files = await k('ingest_files').whereIn('source', sources).whereNotNull('staging_json').select('id', 'status');
	for (const f of files) {
		const id = Number(f.id);
		if (f.status === 'processing') {
			await undoUnpublished(k, id);
			out.undone++;
			continue;
		}
		await removeStaged(k, id);
		const scored = await scoreFile(k, id);
		const row = await k('ingest_files').where({ id }).first('report_json');
		if (row?.report_json) {
			const report = JSON.parse(row.report_json) as IngestReport;
			report.waferSteps = { scored: report.waferSteps.scored + scored.scored, noBaseline: report.waferSteps.noBaseline + scored.noBaseline };
			report.alarmsOpened = [...report.alarmsOpened, ...scored.alarmsOpened];
			report.summary = summarise(report);
			await k('ingest_files').where({ id }).update({ report_json: JSON.stringify(report) });
		}
		await k('ingest_files').where({ id }).update({ staging_json: null });
		out.scored++;
	}
	return out;
}

/** The id of an earlier file with these bytes that was stored completely, or null. */
async function findCompleteFile(k: Knex, sha256: string): Promise<number | null> {
	const r = await k('ingest_files').where({ sha256, status: 'done', rows_rejected: 0 }).orderBy('id').first('id');
	return r ? Number(r.id) : null;
}

/**
 * An earlier refusal of the same bytes for what the bytes say (kind `input`: encoding, header, structure,
 * rows all refused) — not an over-size refusal (the limit is a setting) nor an internal failure.
 */
async function findRefusal(k: Knex, sha256: string): Promise<{ fileId: number; report: IngestReport } | null> {
	const r = await k('ingest_files').where({ sha256, status: 'rejected' }).orderBy('id', 'desc').first('id', 'report_json');
	if (!r?.report_json) return null;
	try {
		const report = JSON.parse(r.report_json) as IngestReport;
		return report.fileError && (report.fileError.kind ?? 'input') === 'input' ? { fileId: Number(r.id), report } : null;
	} catch {
		return null;
	}
}

/** The same bytes were refused before: the same refusal, answered without reading them and not recorded again. */
function repeatedRefusal(base: Base, earlier: { fileId: number; report: IngestReport }): IngestReport {
	const e = earlier.report;
	const stats = { ...emptyStats(), rejections: e.rejections ?? [], rejectionsTotal: e.rejectionsTotal ?? 0, rejectionCounts: e.rejectionCounts ?? [] };
	return makeReport(base, 'rejected', stats, { fileError: e.fileError, duplicateOfFileId: earlier.fileId });
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

/**
 * A refused file is recorded (status rejected) with its located error — and, when it was refused after
 * rows that were all refused, those rows' kept rejections and counts; nothing else from it.
 */
export async function recordRefused(k: Knex = db(), base: Base, opts: IngestOptions, e: IngestFileError): Promise<IngestReport> {
	const fileError: Rejection = { line: e.location.line ?? 0, column: e.location.column, value: e.location.value, reason: e.message, kind: e.kind };
	const d = e.detail;
	const stats = d
		? { ...emptyStats(), rows: { total: d.rowsRead, accepted: 0, rejected: d.rowsRead, duplicate: 0 }, rejections: d.rejections.slice(0, REPORT_REJECTION_CAP), rejectionsTotal: d.rejectionsTotal, rejectionCounts: d.rejectionCounts }
		: emptyStats();
	const report = makeReport(base, 'rejected', stats, { fileError });
	return k.transaction(async (trx) => {
		const [row] = await trx('ingest_files').insert(fileRow(base, opts, 'rejected', report)).returning('id');
		const fileId = Number(typeof row === 'object' ? row.id : row);
		const rows = [fileError, ...(d?.rejections ?? [])].map((r) => ({ ingest_file_id: fileId, line: r.line, column: r.column, value: r.value, reason: r.reason }));
		for (let i = 0; i < rows.length; i += 500) await trx('ingest_rejections').insert(rows.slice(i, i + 500));
		const withId = { ...report, fileId };
		await trx('ingest_files').where({ id: fileId }).update({ report_json: JSON.stringify(withId) });
		return withId;
	});
}

/** An internal failure: nothing of the file was kept; record the attempt when the database still answers. */
async function recordFailed(k: Knex, base: Base, opts: IngestOptions, e: unknown): Promise<IngestReport> {
	// clipped: a failed statement's message can carry its SQL with every bound vector
	const reason = clip(e instanceof Error ? e.message : String(e), 500);
	const report = makeReport(base, 'failed', emptyStats(), { fileError: { line: 0, column: null, value: null, reason } });
	try {
		const [row] = await k('ingest_files').insert(fileRow(base, opts, 'failed', report)).returning('id');
		report.fileId = Number(typeof row === 'object' ? row.id : row);
	} catch {
		/* the database itself is the problem: the caller logs the report */
	}
	console.error(`ingest of ${base.fileName} failed: ${reason}`);
	return report;
}

/** Ingest rows already in memory (JSON-shaped), e.g. from a script. */
export async function ingestRows(rows: Record<string, unknown>[], opts: IngestOptions & { originalName: string }): Promise<IngestReport> {
	const tmp = await writeTemp(Buffer.from(JSON.stringify(rows)), '.json');
	try {
		return await ingestFile(tmp, { ...opts, format: 'json' });
	} finally {
		await fs.promises.rm(tmp, { force: true });
	}
}
