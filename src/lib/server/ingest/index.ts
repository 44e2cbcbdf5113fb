/** The ingest pipeline (see pipeline.ts and FORMAT.md). */
export { ingestFile, ingestRows, inspectFile, recoverInterruptedIngests, type IngestOptions, type IngestProgress } from './pipeline.ts';
export { spoolStream, sweepSpool } from './spool.ts';
export { IngestFileError } from './errors.ts';
export type { IngestReport, IngestSource, IngestStatus, Rejection, DuplicateRow } from './report.ts';
export { REQUIRED_COLUMNS, OPTIONAL_COLUMNS } from './columns.ts';
