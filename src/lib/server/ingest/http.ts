/**
 * The HTTP side of ingest for `POST /api/ingest`: content type, declared size, spooling the streamed
 * body, and the status code that goes with a report.
 */
import { Readable } from 'node:stream';
import type { ReadableStream as NodeWebStream } from 'node:stream/web';
import fs from 'node:fs';
import { config } from '../config.ts';
import type { Role } from '../roles.ts';
import { formatBytes } from './bytes.ts';
import { IngestFileError } from './errors.ts';
import { JSON_LIMIT_BYTES, MAX_LINE_BYTES } from './limits.ts';
import { ingestFile, recordRefused, type IngestOptions } from './pipeline.ts';
import { finishProgress, setProgress, UPLOAD_ID } from './progress.ts';
import type { IngestReport } from './report.ts';
import { spoolStream } from './spool.ts';

export interface IngestRequestContext {
	user: { id: string; role: Role } | null;
	/** `registers`: the token carries the register scope (api-tokens.ts: tokenRegistersChambers) */
	token: { id: number; registers?: boolean } | null;
}

export interface HttpAnswer {
	status: number;
	body: unknown;
}

function refusal(status: number, error: string, file: string | null, report?: IngestReport): HttpAnswer {
	// A refused file names its one error; a file whose every row was refused names its first rejection.
	const loc = report?.fileError ?? report?.rejections[0];
	return {
		status,
		body: { error, location: { file, line: loc?.line || null, column: loc?.column ?? null }, ...(report ? { report } : {}) }
	};
}

/** A safe display name from the client (`?name=` or `X-File-Name`), or a generated one. */
export function fileNameFrom(raw: string | null, format: 'csv' | 'json'): string {
	let name = '';
	try {
		name = decodeURIComponent(raw ?? '');
	} catch {
		name = raw ?? '';
	}
	name = name.split(/[\\/]/).pop()!.replace(/[\u0000-\u001f]/g, '').trim().slice(0, 200);
	return name || `api-${new Date().toISOString().replace(/[:.]/g, '')}.${format}`;
}

export async function ingestRequest(request: Request, url: URL, ctx: IngestRequestContext): Promise<HttpAnswer> {
	const type = (request.headers.get('content-type') ?? '').split(';')[0].trim().toLowerCase();
	const format: 'csv' | 'json' | null = type === 'text/csv' ? 'csv' : type === 'application/json' ? 'json' : null;
	if (!format) return refusal(415, `Send the wafer summaries as text/csv or application/json (got ${type || 'no content type'}).`, null);
	const name = fileNameFrom(url.searchParams.get('name') ?? request.headers.get('x-file-name'), format);
	const limitBytes = format === 'json' ? Math.min(config.uploadLimitBytes, JSON_LIMIT_BYTES) : config.uploadLimitBytes;
	const declared = Number(request.headers.get('content-length'));
	if (Number.isFinite(declared) && declared > limitBytes)
		return refusal(413, `${name} is ${formatBytes(declared)}, larger than the limit of ${formatBytes(limitBytes)}; split it into smaller files.`, name);

	const uploadId = request.headers.get('x-upload-id');
	const owner = ctx.token ? `token:${ctx.token.id}` : `user:${ctx.user?.id}`;
	const track = uploadId && UPLOAD_ID.test(uploadId) ? uploadId : null;
	const total = Number.isFinite(declared) ? declared : 0;
	const opts: IngestOptions = {
		source: ctx.token ? 'api' : 'upload',
		originalName: name,
		format,
		submittedBy: ctx.user?.id ?? null,
		submitterRole: ctx.user?.role ?? null,
		apiTokenId: ctx.token?.id ?? null,
		// Without the register scope the ingest policy decides (pipeline.ts).
		registerUnknownChambers: ctx.token?.registers ? true : undefined,
		limitBytes,
		onProgress: track ? (p) => setProgress(owner, track, p) : undefined
	};

	const body = request.body ? Readable.fromWeb(request.body as unknown as NodeWebStream<Uint8Array>) : Readable.from([]);
	let spooled: Awaited<ReturnType<typeof spoolStream>>;
	try {
		spooled = await spoolStream(body, {
			limitBytes,
			maxLineBytes: MAX_LINE_BYTES,
			name,
			ext: `.${format}`,
			onBytes: track ? (n) => setProgress(owner, track, { phase: 'receiving', bytesDone: n, bytesTotal: total, rows: 0 }) : undefined
		});
	} catch (e) {
		if (e instanceof IngestFileError) {
			const report = await recordRefused(undefined, { fileName: name, source: opts.source, sha256: '', sizeBytes: 0, receivedAt: Date.now() }, opts, e);
			if (track) finishProgress(owner, track, report);
			return refusal(e.kind === 'size' ? 413 : 400, report.summary, name, report);
		}
		// adapter-node refuses bodies above BODY_SIZE_LIMIT by failing the stream.
		const status = (e as { status?: number }).status === 413 ? 413 : 400;
		return refusal(status, `The upload could not be read: ${e instanceof Error ? e.message : String(e)}`, name);
	}
	try {
		const report = await ingestFile(spooled.path, { ...opts, inspected: spooled.info });
		if (track) finishProgress(owner, track, report);
		if (report.status === 'rejected') return refusal(report.fileError?.kind === 'size' ? 413 : 400, report.summary, name, report);
		if (report.status === 'failed') return refusal(500, report.summary, name, report);
		// Read to the end but not one row stored (the inbox quarantines such a file): the sender must
		// not take a 200 for it.
		if (report.status === 'done' && report.rows.accepted + report.rows.duplicate === 0) return refusal(422, report.summary, name, report);
		return { status: 200, body: report };
	} finally {
		await fs.promises.rm(spooled.path, { force: true });
	}
}
