/** One row of the `npm run bench` table: a measured value, its unit, the target and numpy's figure where there is one. */
export interface BenchFigure {
	name: string;
	value: number;
	unit: string;
	target?: string;
	/** the same work done by numpy, in the same unit */
	numpy?: number;
}
