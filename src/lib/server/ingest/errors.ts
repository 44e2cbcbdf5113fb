/** Where in the input a problem sits. Lines and columns count from 1; the header is line 1. */
export interface Location {
	line: number | null;
	/** the column's name (or its number, "column 7", when it has none) */
	column: string | null;
	value: string | null;
}

/** With a refusal after many refused rows: the rows' own rejections, bounded, and their counts. */
export interface RefusalDetail {
	rejections: Array<Location & { line: number; reason: string }>;
	rejectionsTotal: number;
	rejectionCounts: Array<{ column: string | null; reason: string; count: number }>;
	rowsRead: number;
}

/**
 * A problem that refuses the whole file (header, encoding, size, structure, or a first thousand rows
 * all refused). Thrown while the file is read, before anything of it is written.
 */
export class IngestFileError extends Error {
	readonly location: Location;
	/** `size` for an over-size file (HTTP 413); everything else is `input` */
	readonly kind: 'size' | 'input';
	readonly detail: RefusalDetail | null;
	constructor(reason: string, location: Partial<Location> = {}, kind: 'size' | 'input' = 'input', detail: RefusalDetail | null = null) {
		super(reason);
		this.name = 'IngestFileError';
		this.kind = kind;
		this.detail = detail;
		this.location = { line: location.line ?? null, column: location.column ?? null, value: location.value ?? null };
	}
}

/** Cut a value for a report: rejected cells can be arbitrarily long. */
export function clip(value: string, max = 120): string {
	return value.length <= max ? value : `${value.slice(0, max)}…`;
}
