/**
 * The chamber screen's time chart: three panels on one time axis — T²/limit, Q/limit (each wafer a
 * point, its EWMA a line, the limit at 1) and the chamber's modified z to the fleet — with
 * maintenance and baseline approvals as vertical marks and the bucket the user came from shaded.
 */
import type { ChamberSeries } from '$lib/server/views/chamber-view';
import { baseAxis, baseTooltip, type ChartColors, type EChartsCoreOption } from './echarts';
import { axisTime, dateTime, ratio, utcStamp } from './format';
import { zoneAbbrev } from '../display/format';

/** Ratios are drawn on a log axis; values below this are drawn at it (the tooltip keeps the value). */
export const RATIO_FLOOR = 0.01;

export function chamberChartOption(s: ChamberSeries, c: ChartColors, zone: string, focus: { at: number; until: number } | null): EChartsCoreOption {
	const clampPt = (t: number, v: number, i: number) => [t, Math.max(v, RATIO_FLOOR), v, s.ids[i]];
	// Lines break where the chamber stood idle (a gap over 10× the median spacing, and at least 2 h),
	// so an EWMA is not drawn straight across hours without wafers.
	const gaps = s.at.slice(1).map((t, i) => t - s.at[i]).sort((a, b) => a - b);
	const idle = Math.max(2 * 3_600_000, 10 * (gaps[Math.floor(gaps.length / 2)] ?? 0));
	const line = (vals: (number | null)[]) =>
		s.at.flatMap((t, i) => {
			const pt: [number, number | null] = [t, vals[i] === null ? null : Math.max(vals[i] as number, RATIO_FLOOR)];
			return i > 0 && t - s.at[i - 1] > idle ? [[t - 1, null] as [number, null], pt] : [pt];
		});
	const pointColor = (v: number) => (v > 1 ? c.alarm : c.info);
	const marks = [
		...s.maintenance.map((m) => ({ xAxis: m.at, name: m.label, lineStyle: { color: c.warn, type: 'dashed' as const }, label: { formatter: m.kind === 'wet_clean' ? 'clean' : m.kind === 'part_swap' ? 'swap' : 'PM', color: c.warn } })),
		...s.baselines
			.filter((b) => b.approvedAt !== null && b.approvedAt >= s.from && b.approvedAt <= s.to)
			.map((b) => ({ xAxis: b.approvedAt!, name: `baseline v${b.version} approved`, lineStyle: { color: c.accent, type: 'solid' as const }, label: { formatter: `v${b.version}`, color: c.accent } }))
	];
	const vMarks = (withLabels: boolean) => ({
		silent: false,
		symbol: 'none',
		animation: false,
		data: marks.map((m) => ({ ...m, label: { ...m.label, show: withLabels, position: 'insideEndTop' as const, fontSize: 10 } })),
		tooltip: { show: true, formatter: (p: { name: string; value: number }) => `${p.name}<br/>${dateTime(p.value, zone)}` }
	});
	const focusArea = focus ? { silent: true, itemStyle: { color: c.accent, opacity: 0.1 }, data: [[{ xAxis: focus.at }, { xAxis: focus.until }]] } : undefined;
	const limitLine = { silent: true, symbol: 'none', animation: false, lineStyle: { color: c.alarm, width: 1.5 }, label: { formatter: 'limit', color: c.alarm, fontSize: 10, position: 'insideStartTop' as const }, data: [{ yAxis: 1 }] };
	const axis = baseAxis(c);
	const x = (gridIndex: number, show: boolean) => ({
		type: 'time' as const,
		gridIndex,
		min: s.from,
		max: s.to,
		...axis,
		// compact month-day and time; the axis title names the zone once
		axisLabel: { ...axis.axisLabel, show, formatter: (v: number) => axisTime(v, zone), hideOverlap: true },
		...(show ? { name: `time (${zoneAbbrev(s.to, zone)})`, nameLocation: 'end' as const, nameGap: 8, nameTextStyle: { color: c.ink3, fontSize: 10, verticalAlign: 'top' as const, padding: [14, 0, 0, 0] } } : {}),
		splitLine: { show: false }
	});
	const yRatio = (gridIndex: number, name: string) => ({
		type: 'log' as const,
		gridIndex,
		name,
		min: RATIO_FLOOR,
		logBase: 10,
		...axis,
		axisLabel: { ...axis.axisLabel, formatter: (v: number) => (v >= 1 ? `${v}×` : `${v}`) }
	});
	return {
		animation: false,
		textStyle: { fontFamily: 'Inter Variable, ui-sans-serif, sans-serif' },
		grid: [
			{ left: 58, right: 16, top: 22, height: '31%' },
			{ left: 58, right: 16, top: '43%', height: '31%' },
			{ left: 58, right: 16, top: '81%', bottom: 26 }
		],
		legend: { top: 0, right: 8, textStyle: { color: c.ink2, fontSize: 11 }, itemWidth: 14, itemHeight: 8, data: ['wafer', 'EWMA', 'EWMA limit'] },
		tooltip: { ...baseTooltip(c), trigger: 'item' },
		axisPointer: { link: [{ xAxisIndex: 'all' }], lineStyle: { color: c.ink3 } },
		dataZoom: [{ type: 'inside', xAxisIndex: [0, 1, 2], filterMode: 'none' }],
		xAxis: [x(0, false), x(1, false), x(2, true)],
		yAxis: [
			yRatio(0, 'T² / limit'),
			yRatio(1, 'Q / limit'),
			{
				type: 'value',
				gridIndex: 2,
				name: 'fleet z',
				...axis,
				splitNumber: 2,
				min: (v: { min: number }) => Math.min(0, Math.floor(v.min)),
				// Room above the flag line when every point is below it; that fixed top gets no label of its
				// own (it would sit on the tick below it).
				...(s.fleet.every((f) => f.modifiedZ < s.fleetThreshold + 1) ? { max: s.fleetThreshold + 1, axisLabel: { ...axis.axisLabel, showMaxLabel: false } } : {})
			}
		],
		series: [
			...(['t2', 'q'] as const).flatMap((stat, g) => {
				const vals = stat === 't2' ? s.t2 : s.q;
				const label = stat === 't2' ? 'T²' : 'Q';
				return [
					{
						id: `${stat}-points`,
						name: 'wafer',
						type: 'scatter',
						xAxisIndex: g,
						yAxisIndex: g,
						symbolSize: 4,
						large: s.at.length > 4000,
						data: s.at.map((t, i) => clampPt(t, vals[i], i)),
						itemStyle: { color: (p: { data: number[] }) => pointColor(p.data[2]), opacity: 0.85 },
						tooltip: { formatter: (p: { data: number[] }) => `${label} ${ratio(p.data[2])} of limit<br/>${dateTime(p.data[0], zone)}${zone === 'UTC' ? '' : ` <span style="opacity:.7">(${utcStamp(p.data[0])})</span>`}<br/><span style="opacity:.7">click to open the wafer-step</span>` },
						markLine: g === 0 ? { ...limitLine } : limitLine,
						markArea: focusArea
					},
					{
						id: `${stat}-ewma`,
						name: 'EWMA',
						type: 'line',
						xAxisIndex: g,
						yAxisIndex: g,
						showSymbol: false,
						connectNulls: false,
						data: line(stat === 't2' ? s.ewmaT2 : s.ewmaQ),
						lineStyle: { color: c.ink1, width: 1.5 },
						itemStyle: { color: c.ink1 },
						tooltip: { show: false },
						markLine: vMarks(g === 0)
					},
					{
						id: `${stat}-ewma-limit`,
						name: 'EWMA limit',
						type: 'line',
						xAxisIndex: g,
						yAxisIndex: g,
						showSymbol: false,
						data: line(stat === 't2' ? s.ewmaT2Upper : s.ewmaQUpper),
						lineStyle: { color: c.ink3, width: 1, type: 'dashed' },
						itemStyle: { color: c.ink3 },
						tooltip: { show: false }
					}
				];
			}),
			{
				id: 'fleet',
				name: 'fleet z',
				type: 'line',
				xAxisIndex: 2,
				yAxisIndex: 2,
				showSymbol: true,
				symbolSize: 4,
				data: s.fleet.map((f) => [f.runAt, f.modifiedZ, f.distance]),
				lineStyle: { color: c.accent, width: 1.5 },
				itemStyle: { color: (p: { data: number[] }) => (p.data[1] > s.fleetThreshold ? c.alarm : c.accent) },
				tooltip: { formatter: (p: { data: number[] }) => `fleet match ${dateTime(p.data[0], zone)}<br/>modified z ${p.data[1].toFixed(2)} · distance ${p.data[2].toFixed(2)}` },
				markLine: { silent: true, symbol: 'none', animation: false, lineStyle: { color: c.alarm, type: 'dashed' }, label: { formatter: `flag at ${s.fleetThreshold}`, color: c.alarm, fontSize: 10, position: 'insideStartTop' }, data: [{ yAxis: s.fleetThreshold }] },
				markArea: focusArea
			}
		]
	};
}
