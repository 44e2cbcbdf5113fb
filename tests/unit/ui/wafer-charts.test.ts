import { describe, expect, it } from 'vitest';
import { compactNumber, contributionOption, spectrumOption, visibleContributors } from '../../../src/lib/components/charts/wafer-charts';
import type { ChartColors } from '../../../src/lib/components/charts/echarts';
import type { Contributor } from '../../../src/lib/server/views/wafer-view';

const colours = new Proxy({}, { get: () => '#888888' }) as ChartColors;
const contributor = (feature: string, share: number, lines: Contributor['lines'] = []): Contributor => ({
	feature,
	value: share * 120_000,
	share,
	kind: feature.startsWith('oes_') ? 'oes' : 'sensor',
	wavelengthNm: null,
	lines,
	z: 1,
	leakGas: null,
	limit: null,
	significant: false,
	unit: null
});

describe('contribution chart', () => {
	it('prints axis numbers short enough not to run together', () => {
		expect([90_000, 120_000, 1_500_000, 950, 0, 2.5e10].map(compactNumber)).toEqual(['90k', '120k', '1.5M', '950', '0', '2.5e10']);
		for (const v of [30_000, 60_000, 90_000, 120_000, 150_000]) expect(compactNumber(v).length).toBeLessThanOrEqual(5);
	});

	it('draws only bars that carry a share and counts the ones left out', () => {
		const list = [contributor('oes_337.1', 0.8, [{ species: 'N2', element: 'N2', wavelengthNm: 337.1, note: 'x' }]), contributor('oes_777.4', 0.19), ...Array.from({ length: 10 }, (_, i) => contributor(`oes_${500 + i}`, 0.001))];
		const { shown, hidden } = visibleContributors(list);
		expect(shown.map((c) => c.feature)).toEqual(['oes_337.1', 'oes_777.4']);
		expect(hidden).toBe(10);
		const opt = contributionOption(list, colours, 'Q') as { yAxis: { data: string[] }; series: { data: unknown[] }[] };
		expect(opt.series[0].data).toHaveLength(2);
		// largest on top (echarts draws categories bottom-up), the line named with its subscript
		expect(opt.yAxis.data).toEqual(['oes_777.4', 'N₂ 337.1 nm']);
	});
});

describe('spectrum chart', () => {
	const spectrum = [
		{ wavelengthNm: 337.1, feature: 'oes_337.1', value: 400, mean: 100, sd: 10, highlighted: true },
		{ wavelengthNm: 750.4, feature: 'oes_750.4', value: 50_000, mean: 50_000, sd: 500, highlighted: false }
	];
	type Opt = { yAxis: { type: string; name: string }; series: { name: string; data: unknown[]; markArea?: unknown }[] };
	it('draws the difference from the golden mean in golden σ, with the ±3σ band as a fixed area', () => {
		const opt = spectrumOption(spectrum, colours, 'z') as Opt;
		const wafer = opt.series.find((s) => s.name === 'this wafer')!;
		expect(wafer.data).toEqual([
			[337.1, 30],
			[750.4, 0]
		]);
		expect(opt.series.find((s) => s.name === 'golden ± 3σ')!.markArea).toBeDefined();
	});
	it('offers a log scale that never plots zero or less', () => {
		const low = [{ ...spectrum[0], value: 0, mean: 5, sd: 10 }, spectrum[1]];
		const opt = spectrumOption(low, colours, 'log') as Opt;
		expect(opt.yAxis.type).toBe('log');
		// every plotted height (the band's second series holds stack increments, not heights)
		const plotted = opt.series.filter((s, i) => !(s.name === 'golden ± 3σ' && i === 1));
		for (const s of plotted) for (const d of s.data as (number[] | { value: number[] })[]) expect((Array.isArray(d) ? d : d.value)[1]).toBeGreaterThan(0);
		// the zero reading sits at the floor, a tenth of the smallest positive value (5 → 0.5), not at the band
		expect((opt.series.find((s) => s.name === 'this wafer')!.data as number[][])[0][1]).toBeCloseTo(0.5, 6);
	});
});
