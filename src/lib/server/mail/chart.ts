/**
 * The digest's chart: the fleet's worst T²/Q ratio per hour (the largest worst_ratio of any chamber in
 * scope, from hourly_rollups), drawn with echarts' server-side SVG renderer. A ratio of 1 is the α
 * limit, drawn as a line. The axis is logarithmic: an excursion 30× over the limit and the everyday
 * 0.2–1 band must both be readable. Hours without wafers are gaps; every hour has a dot, so a lone
 * hour between gaps still shows. Colours are fixed (a mail has no theme): dark ink on white, the
 * limit and the hours beyond it in the alarm red, the rest in Lockstep's violet.
 */
import * as echarts from 'echarts';

export interface HourPoint {
	hourAt: number;
	worst: number | null;
}

export function worstRatioChartSvg(points: HourPoint[], opts: { width?: number; height?: number; timeZone: string }): string {
	const width = opts.width ?? 560;
	const height = opts.height ?? 180;
	const label = new Intl.DateTimeFormat('en-GB', { timeZone: opts.timeZone, hour: '2-digit', minute: '2-digit', day: 'numeric', month: 'short' });
	const chart = echarts.init(null, null, { renderer: 'svg', ssr: true, width, height });
	try {
		const max = Math.max(2, ...points.map((p) => p.worst ?? 0));
		const floor = 0.1;
		chart.setOption({
			animation: false,
			backgroundColor: '#ffffff',
			textStyle: { fontFamily: 'Arial, Helvetica, sans-serif', color: '#434e59' },
			grid: { left: 44, right: 14, top: 16, bottom: 28 },
			xAxis: {
				type: 'time',
				axisLabel: { color: '#5f6b77', fontSize: 10, formatter: (v: number) => label.format(new Date(v)), hideOverlap: true },
				axisLine: { lineStyle: { color: '#d3dae1' } },
				splitLine: { show: false }
			},
			yAxis: {
				type: 'log',
				logBase: 10,
				min: floor,
				max: 10 ** Math.ceil(Math.log10(max)),
				name: 'worst ratio (log scale)',
				nameTextStyle: { color: '#5f6b77', fontSize: 10, align: 'left' },
				axisLabel: { color: '#5f6b77', fontSize: 10 },
				splitLine: { lineStyle: { color: '#eef1f4' } }
			},
			series: [
				{
					type: 'line',
					data: points.map((p) => [p.hourAt, p.worst === null ? null : Math.max(floor, p.worst)]),
					connectNulls: false,
					showSymbol: true,
					symbol: 'circle',
					symbolSize: 3,
					itemStyle: { color: '#6f35c8' },
					lineStyle: { color: '#6f35c8', width: 1.5 },
					markLine: {
						silent: true,
						symbol: 'none',
						label: { formatter: 'limit', color: '#bf1f45', fontSize: 10, position: 'insideEndTop' },
						lineStyle: { color: '#bf1f45', type: 'dashed', width: 1 },
						data: [{ yAxis: 1 }]
					}
				},
				{
					// the hours beyond the limit, drawn over the line in red
					type: 'scatter',
					symbolSize: 6,
					itemStyle: { color: '#bf1f45' },
					data: points.filter((p) => p.worst !== null && p.worst > 1).map((p) => [p.hourAt, p.worst])
				}
			]
		});
		return chart.renderToSVGString();
	} finally {
		chart.dispose();
	}
}
