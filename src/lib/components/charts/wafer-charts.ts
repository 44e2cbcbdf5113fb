/**
 * The wafer-step screen's charts: the ranked contributions (horizontal bars, largest on top, each OES
 * channel named by its likely line) and the spectrum against the golden mean ± 3σ band with the
 * contributing channels marked — as intensity, on a log scale, or as the difference from the golden
 * mean in golden σ (where the band is always ±3 and a leak line stands out however faint it is).
 */
import type { Contributor, WaferView } from '$lib/server/views/wafer-view';
import { LEAK_RISE_Z } from '$lib/monitoring/leak-rule';
import { channelWavelength, chemical, OFF_CENTRE_NM } from '$lib/components/display/feature-name';
import { baseAxis, baseTooltip, type ChartColors, type EChartsCoreOption } from './echarts';
import { value } from './format';

/** "N₂ 337.1 nm" for an OES channel on a listed line, else the column ("oes_512.3", "backside_he_sccm"). */
export function contributorLabel(c: Contributor): string {
	const l = c.lines[0];
	if (!l) return c.feature;
	const at = c.wavelengthNm ?? channelWavelength(c.feature);
	const off = at !== null && Math.abs(at - l.wavelengthNm) > OFF_CENTRE_NM ? ` (ch. ${at.toFixed(1)})` : '';
	return `${chemical(l.species)} ${l.wavelengthNm.toFixed(1)} nm${off}`;
}

/** Bars below this share of the statistic are not drawn (they would read as "0 %"). */
export const MIN_BAR_SHARE = 0.005;

/**
 * The contributors worth a bar: those carrying at least MIN_BAR_SHARE of the statistic, in rank order;
 * `hidden` counts the rest, which the page says were left out.
 */
export function visibleContributors(list: Contributor[], minShare = MIN_BAR_SHARE): { shown: Contributor[]; hidden: number } {
	const shown = list.filter((r) => r.share >= minShare);
	return { shown, hidden: list.length - shown.length };
}

/**
 * An axis number short enough that neighbours never run together: 950, 9.5k, 120k, 1.2M, 3.4e9.
 * (echarts' own labels print full grouped numbers, "90,000120,000" at this chart's width.)
 */
export function compactNumber(v: number): string {
	const a = Math.abs(v);
	if (a === 0) return '0';
	if (a >= 1e9) return v.toExponential(1).replace('e+', 'e');
	if (a >= 1e6) return `${+(v / 1e6).toPrecision(3)}M`;
	if (a >= 1e3) return `${+(v / 1e3).toPrecision(3)}k`;
	if (a >= 1) return `${+v.toPrecision(3)}`;
	return v.toPrecision(2);
}

export function contributionOption(list: Contributor[], c: ChartColors, stat: 'T²' | 'Q'): EChartsCoreOption {
	const rows = [...visibleContributors(list).shown].reverse();
	const axis = baseAxis(c);
	// Red only for a leak line that has actually risen (the engine's leak rule): a quiet N₂ channel is not news.
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
				const line = r.lines[0] ? `<br/>${contributorLabel(r)} — ${chemical(r.lines[0].note)}` : '';
				const lim = r.limit !== null ? `<br/>${r.significant ? 'beyond' : 'inside'} its contribution limit ${value(r.limit)}` : '';
				return `<b>${r.feature}</b>${line}<br/>contribution to ${stat} ${value(r.value)} (${(r.share * 100).toFixed(1)} % of the total)${lim}<br/>wafer value ${r.z >= 0 ? '+' : ''}${r.z.toFixed(1)} golden σ`;
			}
		},
		xAxis: {
			type: 'value',
			...axis,
			splitNumber: 3,
			axisLabel: { ...axis.axisLabel, formatter: compactNumber, hideOverlap: true },
			name: `contribution to ${stat}`,
			nameLocation: 'middle',
			nameGap: 22
		},
		yAxis: { type: 'category', data: rows.map(contributorLabel), ...axis, axisLabel: { ...axis.axisLabel, color: c.ink2, fontSize: 11 }, splitLine: { show: false } },
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
					formatter: (p: { dataIndex: number }) => `${Math.max(1, Math.round(rows[p.dataIndex].share * 100))} %${rows[p.dataIndex].significant ? ' · beyond' : ''}`
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

export type SpectrumMode = 'linear' | 'log' | 'z';

/** How many contributor marks carry a wavelength label (the rest are dots; labels never overlap). */
const LABELLED_MARKS = 6;

export function spectrumOption(spectrum: WaferView['spectrum'], c: ChartColors, mode: SpectrumMode = 'linear'): EChartsCoreOption {
	const axis = baseAxis(c);
	const hasBand = spectrum.some((p) => Number.isFinite(p.mean));
	const z = mode === 'z' && hasBand;
	// On a log axis nothing may be ≤ 0: the floor is a tenth of the smallest positive reading.
	const positive = spectrum.flatMap((p) => [p.value, p.mean, p.mean - 3 * p.sd]).filter((v) => Number.isFinite(v) && v > 0);
	const floor = mode === 'log' && positive.length ? Math.min(...positive) / 10 : 0;
	const zOf = (p: WaferView['spectrum'][number]) => (p.sd > 0 ? (p.value - p.mean) / p.sd : 0);
	const y = (p: WaferView['spectrum'][number]) => (z ? zOf(p) : Math.max(floor, p.value));
	const lower = spectrum.map((p) => [p.wavelengthNm, Math.max(floor, p.mean - 3 * p.sd)]);
	const width = spectrum.map((p) => [p.wavelengthNm, Math.max(floor, p.mean + 3 * p.sd) - Math.max(floor, p.mean - 3 * p.sd)]);
	const marked = spectrum.filter((p) => p.highlighted);
	const labelled = new Set([...marked].sort((a, b) => Math.abs(zOf(b)) - Math.abs(zOf(a))).slice(0, LABELLED_MARKS).map((p) => p.feature));
	const band = z
		? [
				{
					name: 'golden ± 3σ',
					type: 'line',
					data: spectrum.map((p) => [p.wavelengthNm, 0]),
					showSymbol: false,
					lineStyle: { color: c.ok, width: 1, type: 'dashed' },
					itemStyle: { color: c.ok },
					markArea: { silent: true, itemStyle: { color: c.ok, opacity: 0.16 }, data: [[{ yAxis: -3 }, { yAxis: 3 }]] },
					tooltip: { show: false }
				}
			]
		: hasBand
			? [
					{ name: 'golden ± 3σ', type: 'line', stack: 'band', data: lower, showSymbol: false, lineStyle: { color: c.ok, width: 0.75, opacity: 0.8 }, itemStyle: { color: c.ok }, tooltip: { show: false }, silent: true },
					{ name: 'golden ± 3σ', type: 'line', stack: 'band', data: width, showSymbol: false, lineStyle: { color: c.ok, width: 0.75, opacity: 0.8 }, areaStyle: { color: c.ok, opacity: 0.3 }, itemStyle: { color: c.ok }, silent: true },
					{ name: 'golden mean', type: 'line', data: spectrum.map((p) => [p.wavelengthNm, Math.max(floor, p.mean)]), showSymbol: false, lineStyle: { color: c.ok, width: 1, type: 'dashed' }, itemStyle: { color: c.ok } }
				]
			: [];
	return {
		animation: false,
		grid: { left: 64, right: 16, top: 30, bottom: 40 },
		legend: { top: 0, right: 8, textStyle: { color: c.ink2, fontSize: 11 }, itemWidth: 14, itemHeight: 8, data: z ? ['this wafer', 'golden ± 3σ', 'top contributors'] : ['this wafer', ...(hasBand ? ['golden mean', 'golden ± 3σ'] : []), 'top contributors'] },
		tooltip: {
			...baseTooltip(c),
			trigger: 'axis',
			formatter: (ps: { dataIndex: number }[]) => {
				const p = spectrum[ps[0]?.dataIndex ?? 0];
				if (!p) return '';
				const zs = p.sd > 0 ? ` (${zOf(p) >= 0 ? '+' : ''}${zOf(p).toFixed(1)} σ)` : '';
				return `<b>${p.wavelengthNm} nm</b> ${p.feature}<br/>this wafer ${value(p.value)}${zs}${hasBand ? `<br/>golden ${value(p.mean)} ± ${value(3 * p.sd)}` : ''}`;
			}
		},
		xAxis: { type: 'value', min: 'dataMin', max: 'dataMax', name: 'wavelength (nm)', nameLocation: 'middle', nameGap: 26, ...axis, splitLine: { show: false } },
		yAxis: z
			? { type: 'value', name: 'difference from golden mean (golden σ)', ...axis, nameTextStyle: { ...axis.nameTextStyle, align: 'left' }, axisLabel: { ...axis.axisLabel, formatter: compactNumber, hideOverlap: true } }
			: { type: mode === 'log' ? 'log' : 'value', name: mode === 'log' ? 'intensity (counts, log)' : 'intensity (counts)', ...axis, nameTextStyle: { ...axis.nameTextStyle, align: 'left' }, axisLabel: { ...axis.axisLabel, formatter: compactNumber, hideOverlap: true } },
		dataZoom: [{ type: 'inside', filterMode: 'none' }],
		series: [
			...band,
			{ name: 'this wafer', type: 'line', data: spectrum.map((p) => [p.wavelengthNm, y(p)]), showSymbol: false, lineStyle: { color: c.ink1, width: 1.25 }, itemStyle: { color: c.ink1 } },
			{
				name: 'top contributors',
				type: 'scatter',
				data: marked.map((p) => ({ value: [p.wavelengthNm, y(p)], label: { show: labelled.has(p.feature) } })),
				symbolSize: 9,
				itemStyle: { color: c.alarm, borderColor: c.surface1, borderWidth: 1 },
				label: { position: 'top', color: c.alarm, fontSize: 10, formatter: (p: { value: number[] }) => `${p.value[0]}` },
				labelLayout: { moveOverlap: 'shiftY', hideOverlap: true },
				tooltip: { show: false }
			}
		]
	};
}
