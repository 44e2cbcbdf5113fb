/**
 * The one error type the engine throws for bad input, so callers (ingest, API routes) can tell a
 * refused row from a bug and report *where* it is: which feature, which row.
 */
export class MonitoringInputError extends Error {
	/** Feature (column) the problem is in, when there is one. */
	readonly feature?: string;
	/** 0-based index of the row (wafer) in the input, when there is one. */
	readonly row?: number;

	constructor(message: string, where: { feature?: string; row?: number } = {}) {
		super(message);
		this.name = 'MonitoringInputError';
		this.feature = where.feature;
		this.row = where.row;
	}
}
