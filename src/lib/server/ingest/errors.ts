/** Where in the input a problem sits. Lines and columns count from 1; the header is line 1. */
export interface Location {
	line: number | null;
	/** the column's name (or its number, "column 7", when it has none) */
	column: string | null;
	value: string | null;
}

/**
 * A problem that refuses the whole file (header, encoding, size, structure). Thrown inside the file's
 * transaction, so whatever was written before it is rolled back.
 */
export class IngestFileError extends Error {
	readonly location: Location;
	/** `size` for an over-size file (HTTP 413); everything else is `input` */
	readonly kind: 'size' | 'input';
	constructor(reason: string, location: Partial<Location> = {}, kind: 'size' | 'input' = 'input') {
		super(reason);
		this.name = 'IngestFileError';
		this.kind = kind;
		this.location = { line: location.line ?? null, column: location.column ?? null, value: location.value ?? null };
	}
}

/** Cut a value for a report: rejected cells can be arbitrarily long. */
export function clip(value: string, max = 120): string {
	return value.length <= max ? value : `${value.slice(0, max)}…`;
}
