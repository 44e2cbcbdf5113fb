/**
 * A short-lived cache of serialised heatmap answers. Every open landing page polls the same view
 * (every 30 s); under load the same few views are asked for many times a second. An answer is kept for
 * `ttlMs` per (query, time zone): a new ingest shows within that time, well inside a polling period.
 * Any change made in this process (an ingest, an acknowledgement) can clear it with `clearHeatmapCache`.
 */
const store = new Map<string, { at: number; body: string }>();

export function cachedHeatmapBody(key: string, at: number, ttlMs: number): string | null {
	const hit = store.get(key);
	if (hit && at - hit.at < ttlMs && at >= hit.at) return hit.body;
	return null;
}

export function putHeatmapBody(key: string, at: number, body: string): void {
	if (store.size > 500) store.clear(); // bounded: views are few, keys include filters and zone
	store.set(key, { at, body });
}

export function clearHeatmapCache(): void {
	store.clear();
}
