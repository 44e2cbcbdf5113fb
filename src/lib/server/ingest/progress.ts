/**
 * Progress of uploads being processed by this server process, for the upload page to poll. Kept in
 * memory on purpose: it describes work in flight in this process, and the database must not hold a
 * half-done file's state (see pipeline.ts). Entries expire after 15 minutes.
 */
import type { IngestReport } from './report.ts';

export interface UploadProgress {
	phase: 'receiving' | 'checking' | 'processing' | 'done';
	bytesDone: number;
	bytesTotal: number;
	rows: number;
	summary?: string;
	fileId?: number | null;
}

const TTL_MS = 15 * 60_000;
const entries = new Map<string, { p: UploadProgress; at: number }>();

export const UPLOAD_ID = /^[A-Za-z0-9-]{8,64}$/;

const key = (owner: string, id: string) => `${owner}\u0000${id}`;

export function setProgress(owner: string, id: string, p: UploadProgress): void {
	const t = Date.now();
	entries.set(key(owner, id), { p, at: t });
	if (entries.size > 200) for (const [k, v] of entries) if (t - v.at > TTL_MS) entries.delete(k);
}

export function finishProgress(owner: string, id: string, report: IngestReport): void {
	setProgress(owner, id, {
		phase: 'done',
		bytesDone: report.sizeBytes,
		bytesTotal: report.sizeBytes,
		rows: report.rows.total,
		summary: report.summary,
		fileId: report.fileId
	});
}

/** The progress of the caller's own upload (another user's id answers null). */
export function getProgress(owner: string, id: string): UploadProgress | null {
	const e = entries.get(key(owner, id));
	return e && Date.now() - e.at <= TTL_MS ? e.p : null;
}
