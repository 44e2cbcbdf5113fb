/** What an ingest run answers and stores (ingest_files.report_json). */
import type { Location } from './errors.ts';

export type IngestSource = 'inbox' | 'upload' | 'api' | 'seed';

/**
 * - `done`: the file was read to the end; accepted rows are stored (rejected rows are listed)
 * - `duplicate`: the same bytes were already ingested completely; nothing was done
 * - `rejected`: the whole file was refused (see fileError); nothing from it was stored
 * - `failed`: an internal error (not the file's fault); nothing from it was stored; try again
 */
export type IngestStatus = 'done' | 'duplicate' | 'rejected' | 'failed';

export interface Rejection extends Location {
	line: number;
	reason: string;
	/** for a whole-file error: `size` when the file was over the limit */
	kind?: 'size' | 'input';
}

/** How many rejections a file had for one column and reason (all of them, also past the kept ones). */
export interface RejectionCount {
	column: string | null;
	reason: string;
	count: number;
}

export interface DuplicateRow {
	line: number;
	waferId: string;
	recipe: string;
	step: string;
	/** the file that stored this wafer-step first */
	storedByFileId: number | null;
}

export interface IngestReport {
	/** ingest_files.id (null for a duplicate file, which is not recorded again) */
	fileId: number | null;
	fileName: string;
	source: IngestSource;
	sha256: string;
	sizeBytes: number;
	status: IngestStatus;
	/** one sentence for people */
	summary: string;
	/**
	 * for `duplicate`: the earlier file with the same SHA-256; for `rejected`: the earlier refusal of the
	 * same bytes, answered again without reading them (a refused file's repeat is cheap)
	 */
	duplicateOfFileId: number | null;
	rows: { total: number; accepted: number; rejected: number; duplicate: number };
	waferSteps: { scored: number; noBaseline: number };
	alarmsOpened: number[];
	/** recipes, recipe steps (their feature sets fixed by this file) and chambers first seen here */
	created: { recipes: string[]; recipeSteps: string[]; chambers: string[] };
	/** the first REPORT_REJECTION_CAP rejections; ingest_rejections keeps the first REJECTION_ROWS_KEPT */
	rejections: Rejection[];
	rejectionsTotal: number;
	/** every rejection counted per column and reason, most frequent first */
	rejectionCounts: RejectionCount[];
	duplicates: DuplicateRow[];
	/** the problem that refused the whole file, located */
	fileError: Rejection | null;
	receivedAt: number;
	finishedAt: number;
	durationMs: number;
}

export function summarise(r: Pick<IngestReport, 'status' | 'rows' | 'waferSteps' | 'alarmsOpened' | 'fileError' | 'duplicateOfFileId' | 'fileName'>): string {
	if (r.status === 'duplicate') return `${r.fileName} was already ingested (file #${r.duplicateOfFileId}); nothing changed.`;
	if (r.status === 'rejected') {
		const e = r.fileError!;
		const where = [e.line ? `line ${e.line}` : null, e.column ? `column ${e.column}` : null].filter(Boolean).join(', ');
		const again = r.duplicateOfFileId !== null ? `, as these same bytes were before (file #${r.duplicateOfFileId})` : '';
		return `${r.fileName} was refused${again}${where ? ` (${where})` : ''}: ${e.reason}`;
	}
	if (r.status === 'failed') return `${r.fileName} could not be processed: ${r.fileError?.reason ?? 'internal error'}. Nothing was stored.`;
	const parts = [`${r.rows.accepted} of ${r.rows.total} rows stored`];
	if (r.rows.rejected) parts.push(`${r.rows.rejected} rejected`);
	if (r.rows.duplicate) parts.push(`${r.rows.duplicate} already stored`);
	parts.push(`${r.waferSteps.scored} scored`, `${r.waferSteps.noBaseline} without an active baseline`);
	if (r.alarmsOpened.length) parts.push(`${r.alarmsOpened.length} alarm${r.alarmsOpened.length > 1 ? 's' : ''} opened`);
	return `${r.fileName}: ${parts.join(', ')}.`;
}
