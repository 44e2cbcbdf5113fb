/**
 * What an upload's badge says, from what was actually stored — never "stored" for a file whose rows
 * were all refused. The ingest status says whether the file was read to the end; this says what came of it.
 */
export type OutcomeTone = 'ok' | 'warn' | 'alarm' | 'info';

export interface FileOutcome {
	/** the badge's word */
	word: string;
	tone: OutcomeTone;
}

export function fileOutcome(status: string, rows: { total: number; accepted: number; rejected: number; duplicate?: number }): FileOutcome {
	if (status === 'processing') return { word: 'processing', tone: 'info' };
	if (status === 'duplicate') return { word: 'already ingested', tone: 'info' };
	if (status === 'rejected') return { word: 'refused', tone: 'alarm' };
	if (status === 'failed') return { word: 'failed', tone: 'alarm' };
	if (status !== 'done') return { word: status, tone: 'info' };
	const dup = rows.duplicate ?? 0;
	if (rows.total === 0) return { word: 'no rows', tone: 'warn' };
	if (rows.accepted === 0 && rows.rejected > 0) return { word: 'nothing stored', tone: 'alarm' };
	if (rows.accepted === 0 && dup > 0) return { word: 'nothing new', tone: 'info' };
	if (rows.rejected > 0) return { word: `partly stored (${rows.accepted} of ${rows.total})`, tone: 'warn' };
	return { word: 'stored', tone: 'ok' };
}
