/**
 * Fixed limits of the ingest pipeline. The file-size limit and the future tolerance are settings
 * (config.ts); these are not, because no real wafer-summary file comes near them and each one guards
 * the server rather than the data.
 */

/** A physical line longer than this refuses the file: 2,048 OES channels × 24 characters is ≈ 50 kB. */
export const MAX_LINE_BYTES = 1024 * 1024;

/** More columns than this refuses the file (a 2,048-pixel spectrum plus a few hundred sensors fits). */
export const MAX_COLUMNS = 4096;

/** Rows queued before they are written and scored together (scoring has a cost per chamber × step group). */
export const BATCH_ROWS = 2000;

/**
 * A file with at most this many accepted rows is published in one transaction (its lock is no longer
 * than one batch of a large file's); a larger one is staged in batches and flipped (pipeline.ts).
 */
export const DIRECT_ROWS = 2000;

/** Rows per INSERT: Knex writes a multi-row insert on SQLite as a compound SELECT, limited to 500 terms. */
export const INSERT_ROWS = 500;

/** Rejections listed in the report JSON (the first ones; `ingest_rejections` keeps REJECTION_ROWS_KEPT). */
export const REPORT_REJECTION_CAP = 200;

/**
 * Rejections stored in full per file (`ingest_rejections`); past them only counts per column and reason
 * are kept (the report's `rejectionCounts`). Before this bound a 2 MB file of empty lines stored 1.5 M
 * rejection rows, ≈ 90× its size (issue 13).
 */
export const REJECTION_ROWS_KEPT = 1000;

/** Distinct column × reason groups counted per file; further ones are counted together as "other". */
export const REJECTION_GROUPS_CAP = 100;

/** A file whose first this-many rows are all refused for what its bytes say is refused there. */
export const REFUSE_AFTER_ROWS = 1000;

/** Rows validated between two yields to the event loop while a file is read. */
export const YIELD_EVERY_ROWS = 1000;

/** Duplicate wafer-steps listed in the report JSON (all are counted). */
export const REPORT_DUPLICATE_CAP = 50;

/** Cell errors recorded for one row (a row with a wrong column count gets one). */
export const MAX_ERRORS_PER_ROW = 20;

/** A JSON body is parsed whole, so it has a smaller cap than a streamed CSV. */
export const JSON_LIMIT_BYTES = 32 * 1024 * 1024;

/** Identifiers (wafer, lot, chamber, recipe, step): the schema's column widths. */
export const ID_MAX = { wafer_id: 64, lot_id: 64, chamber_id: 32, recipe: 64, step: 64 } as const;
