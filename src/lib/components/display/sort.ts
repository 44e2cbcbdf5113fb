/** Client-side sorting for the small tables of these screens (a few hundred rows at most). */
export type SortDir = 'asc' | 'desc';
export interface SortState<K extends string> {
	key: K;
	dir: SortDir;
}

/** Next state after clicking a header: the same key flips, a new key starts at its natural order. */
export function nextSort<K extends string>(s: SortState<K>, key: K, firstDir: SortDir = 'asc'): SortState<K> {
	return s.key === key ? { key, dir: s.dir === 'asc' ? 'desc' : 'asc' } : { key, dir: firstDir };
}

/** Sorted copy; nulls last whichever the direction, ties keep their order. */
export function sortRows<T, K extends string>(rows: readonly T[], s: SortState<K>, value: (row: T, key: K) => string | number | null | undefined): T[] {
	const sign = s.dir === 'asc' ? 1 : -1;
	return rows
		.map((row, i) => ({ row, i, v: value(row, s.key) }))
		.sort((a, b) => {
			const an = a.v === null || a.v === undefined;
			const bn = b.v === null || b.v === undefined;
			if (an || bn) return an && bn ? a.i - b.i : an ? 1 : -1;
			const c = typeof a.v === 'number' && typeof b.v === 'number' ? a.v - b.v : String(a.v).localeCompare(String(b.v), 'en', { numeric: true });
			return c === 0 ? a.i - b.i : sign * c;
		})
		.map((x) => x.row);
}
