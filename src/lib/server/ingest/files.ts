/** Ingested files as the upload page lists them. */
import type { Knex } from 'knex';
import { db } from '../db.ts';
import type { IngestReport, Rejection } from './report.ts';

export interface IngestFileSummary {
	id: number;
	source: string;
	name: string;
	status: string;
	sizeBytes: number;
	receivedAt: number;
	rows: { total: number; accepted: number; rejected: number; duplicate: number };
	submittedBy: string | null;
	tokenName: string | null;
}

export async function listRecentFiles(limit = 25, k: Knex = db()): Promise<IngestFileSummary[]> {
	const rows = await k('ingest_files as f')
		.leftJoin('users as u', 'u.id', 'f.submitted_by')
		.leftJoin('api_tokens as t', 't.id', 'f.api_token_id')
		.orderBy('f.id', 'desc')
		.limit(limit)
		.select('f.*', 'u.username', 't.name as token_name');
	return rows.map((r) => ({
		id: Number(r.id),
		source: r.source,
		name: r.original_name,
		status: r.status,
		sizeBytes: Number(r.size_bytes),
		receivedAt: Number(r.received_at),
		rows: { total: r.rows_total, accepted: r.rows_accepted, rejected: r.rows_rejected, duplicate: r.rows_duplicate },
		submittedBy: r.username ?? null,
		tokenName: r.token_name ?? null
	}));
}

/** A stored file's report and the first `limit` of all its rejections (the report keeps a capped list). */
export async function getFileReport(id: number, limit = 1000, k: Knex = db()): Promise<{ report: IngestReport; rejections: Rejection[] } | null> {
	const f = await k('ingest_files').where({ id }).first('report_json');
	if (!f?.report_json) return null;
	const rejections = await k('ingest_rejections').where({ ingest_file_id: id }).orderBy(['line', 'id']).limit(limit).select('line', 'column', 'value', 'reason');
	return { report: JSON.parse(f.report_json) as IngestReport, rejections };
}
