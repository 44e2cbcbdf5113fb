/**
 * The wafer-step screen's charts: the ranked contributions (horizontal bars, largest on top, each OES
 * channel labelled with its likely line) and the spectrum against the golden mean ± 3σ band with the
 * contributing channels marked.
 */
import type { Contributor, WaferView } from '$lib/server/views/wafer-view';
import { LEAK_RISE_Z } from '$lib/monitoring/leak-signature';
import { baseAxis, baseTooltip, type ChartColors, type EChartsCoreOption } from './echarts';
import { value } from './format';

/** "oes_337.1 · N2 337.1" or "backside_he_sccm" */
export function contributorLabel(c: Contributor): string {
	const l = c.lines[0];
	return l ? `${c.feature} · ${l.species} ${l.wavelengthNm}` : c.feature;
}

export function contributionOption(list: Contributor[], c: ChartColors, stat: 'T²' | 'Q'): EChartsCoreOption {
	const rows = [...list].reverse();
	const axis = baseAxis(c);
	// Red only for a leak line that has actually risen (the engine's leak rule): a quiet N2 channel is not news.
	const colour = (r: Contributor) => (r.leakGas !== null && r.z > LEAK_RISE_Z ? c.alarm : r.kind === 'sensor' ? c.warn : c.info);
	// A contribution inside its control limit (Alcala & Qin 2011) is drawn faint: it is what an
	// in-control wafer shows, not evidence. The tick on each bar is the limit.
	const hasLimits = rows.some((r) => r.limit !== null);
	return {
		animation: false,
		grid: { left: 8, right: 84, top: 8, bottom: 24, containLabel: true },
		tooltip: {
			...baseTooltip(c),
			trigger: 'item',
			formatter: (p: { dataIndex: number }) => {
				const r = rows[p.dataIndex];
				const line = r.lines[0] ? `<br/>${r.lines[0].species} ${r.lines[0].wavelengthNm} nm — ${r.lines[0].note}` : '';
				const lim = r.limit !== null ? `<br/>${r.significant ? 'beyond' : 'inside'} its contribution limit ${value(r.limit)}` : '';
				return `<b>${r.feature}</b>${line}<br/>contribution to ${stat} ${value(r.value)} (${(r.share * 100).toFixed(1)} % of the total)${lim}<br/>wafer value ${r.z >= 0 ? '+' : ''}${r.z.toFixed(1)} golden σ`;
			}
		},
		xAxis: { type: 'value', ...axis, name: `contribution to ${stat}`, nameLocation: 'middle', nameGap: 20 },
		yAxis: { type: 'category', data: rows.map(contributorLabel), ...axis, axisLabel: { ...axis.axisLabel, color: c.ink2, fontFamily: 'JetBrains Mono Variable, ui-monospace, monospace', fontSize: 11 }, splitLine: { show: false } },
		series: [
			{
				type: 'bar',
				barMaxWidth: 14,
				data: rows.map((r) => ({ value: r.value, itemStyle: { color: colour(r), opacity: !hasLimits || r.significant ? 1 : 0.35 } })),
				label: {
					show: true,
					position: 'right',
					color: c.ink3,
					fontSize: 10,
					formatter: (p: { dataIndex: number }) => `${(rows[p.dataIndex].share * 100).toFixed(0)} %${rows[p.dataIndex].significant ? ' · beyond' : ''}`
				}
			},
			...(hasLimits
				? [
						{
							type: 'scatter',
							name: 'contribution limit',
							symbol: 'rect',
							symbolSize: [2, 16],
							itemStyle: { color: c.ink1 },
							data: rows.map((r) => r.limit),
							tooltip: { show: false },
							silent: true,
							z: 5
						}
					]
				: [])
		]
	};
}

export function spectrumOption(spectrum: WaferView['spectrum'], c: ChartColors): EChartsCoreOption {
	const axis = baseAxis(c);
	const hasBand = spectrum.some((p) => Number.isFinite(p.mean));
	const lower = spectrum.map((p) => [p.wavelengthNm, Math.max(0, p.mean - 3 * p.sd)]);
	const width = spectrum.map((p) => [p.wavelengthNm, p.mean + 3 * p.sd - Math.max(0, p.mean - 3 * p.sd)]);
	const marked = spectrum.filter((p) => p.highlighted);
	return {
		animation: false,
		grid: { left: 64, right: 16, top: 28, bottom: 40 },
		legend: { top: 0, right: 8, textStyle: { color: c.ink2, fontSize: 11 }, itemWidth: 14, itemHeight: 8, data: ['this wafer', 'golden mean', 'golden ± 3σ', 'top contributors'] },
		tooltip: {
			...baseTooltip(c),
			trigger: 'axis',
			formatter: (ps: { dataIndex: number }[]) => {
				const p = spectrum[ps[0]?.dataIndex ?? 0];
				if (!p) return '';
				const z = p.sd > 0 ? ` (${((p.value - p.mean) / p.sd).toFixed(1)} σ)` : '';
				return `<b>${p.wavelengthNm} nm</b> ${p.feature}<br/>this wafer ${value(p.value)}${z}${hasBand ? `<br/>golden ${value(p.mean)} ± ${value(3 * p.sd)}` : ''}`;
			}
		},
		xAxis: { type: 'value', min: 'dataMin', max: 'dataMax', name: 'wavelength (nm)', nameLocation: 'middle', nameGap: 26, ...axis, splitLine: { show: false } },
		yAxis: { type: 'value', name: 'intensity (counts)', ...axis },
		dataZoom: [{ type: 'inside', filterMode: 'none' }],
		series: [
			...(hasBand
				? [
						{ name: 'golden ± 3σ', type: 'line', stack: 'band', data: lower, showSymbol: false, lineStyle: { opacity: 0 }, tooltip: { show: false }, silent: true },
						{ name: 'golden ± 3σ', type: 'line', stack: 'band', data: width, showSymbol: false, lineStyle: { opacity: 0 }, areaStyle: { color: c.ok, opacity: 0.22 }, itemStyle: { color: c.ok }, silent: true },
						{ name: 'golden mean', type: 'line', data: spectrum.map((p) => [p.wavelengthNm, p.mean]), showSymbol: false, lineStyle: { color: c.ok, width: 1, type: 'dashed' }, itemStyle: { color: c.ok } }
					]
				: []),
			{ name: 'this wafer', type: 'line', data: spectrum.map((p) => [p.wavelengthNm, p.value]), showSymbol: false, lineStyle: { color: c.ink1, width: 1.25 }, itemStyle: { color: c.ink1 } },
			{
				name: 'top contributors',
				type: 'scatter',
				data: marked.map((p) => [p.wavelengthNm, p.value]),
				symbolSize: 9,
				itemStyle: { color: c.alarm, borderColor: c.surface1, borderWidth: 1 },
				label: { show: true, position: 'top', color: c.alarm, fontSize: 10, formatter: (p: { data: number[] }) => `${p.data[0]}` },
				tooltip: { show: false }
			}
		]
	};
}
