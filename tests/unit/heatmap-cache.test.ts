import { describe, expect, it } from 'vitest';
import { cachedHeatmapBody, clearHeatmapCache, putHeatmapBody } from '../../src/lib/server/views/heatmap-cache.ts';

describe('heatmap answer cache', () => {
	it('serves a stored answer within its time to live, and not after', () => {
		clearHeatmapCache();
		putHeatmapBody('UTC|{"window":"30d"}', 1000, '{"a":1}');
		expect(cachedHeatmapBody('UTC|{"window":"30d"}', 5999, 5000)).toBe('{"a":1}');
		expect(cachedHeatmapBody('UTC|{"window":"30d"}', 6000, 5000)).toBeNull();
		// another zone or filter is another view
		expect(cachedHeatmapBody('Europe/Vienna|{"window":"30d"}', 2000, 5000)).toBeNull();
		// a clock that went back (tests, the demo replay) never serves a future answer
		expect(cachedHeatmapBody('UTC|{"window":"30d"}', 500, 5000)).toBeNull();
		clearHeatmapCache();
		expect(cachedHeatmapBody('UTC|{"window":"30d"}', 2000, 5000)).toBeNull();
	});
});
