/**
 * The echarts build Lockstep ships: only the chart types and components its screens use, registered
 * once (tree-shaken imports from echarts/core keep the bundle small), with the canvas renderer.
 * echarts draws with inline styles and no eval, which the CSP allows.
 */
import * as echarts from 'echarts/core';
import { BarChart, LineChart, ScatterChart } from 'echarts/charts';
import {
	DataZoomComponent,
	GridComponent,
	LegendComponent,
	MarkAreaComponent,
	MarkLineComponent,
	MarkPointComponent,
	TooltipComponent
} from 'echarts/components';
import { CanvasRenderer } from 'echarts/renderers';
import { LabelLayout } from 'echarts/features';

echarts.use([
	BarChart,
	LineChart,
	ScatterChart,
	DataZoomComponent,
	GridComponent,
	LegendComponent,
	MarkAreaComponent,
	MarkLineComponent,
	MarkPointComponent,
	TooltipComponent,
	LabelLayout,
	CanvasRenderer
]);

export { echarts };
export type { EChartsCoreOption } from 'echarts/core';

/** Theme colours for charts, read from the page's CSS variables (src/app.css). */
export interface ChartColors {
	ink1: string;
	ink2: string;
	ink3: string;
	line: string;
	surface0: string;
	surface1: string;
	surface2: string;
	accent: string;
	ok: string;
	warn: string;
	alarm: string;
	info: string;
	theme: 'dark' | 'light';
}

/** The current theme's chart colours. Browser only. */
export function readChartColors(): ChartColors {
	const css = getComputedStyle(document.documentElement);
	const v = (n: string) => css.getPropertyValue(`--ls-${n}`).trim();
	return {
		ink1: v('ink-1'),
		ink2: v('ink-2'),
		ink3: v('ink-3'),
		line: v('line'),
		surface0: v('surface-0'),
		surface1: v('surface-1'),
		surface2: v('surface-2'),
		accent: v('accent'),
		ok: v('ok'),
		warn: v('warn'),
		alarm: v('alarm'),
		info: v('info'),
		theme: document.documentElement.dataset.theme === 'light' ? 'light' : 'dark'
	};
}

/** Axis, grid and tooltip styling shared by Lockstep's charts. */
export function baseAxis(c: ChartColors) {
	return {
		axisLine: { lineStyle: { color: c.line } },
		axisTick: { lineStyle: { color: c.line } },
		axisLabel: { color: c.ink3, fontSize: 11, fontFamily: 'Inter Variable, ui-sans-serif, sans-serif' },
		splitLine: { lineStyle: { color: c.line, opacity: 0.6 } },
		nameTextStyle: { color: c.ink3, fontSize: 11 }
	};
}

export function baseTooltip(c: ChartColors) {
	return {
		backgroundColor: c.surface2,
		borderColor: c.line,
		textStyle: { color: c.ink1, fontSize: 12 },
		extraCssText: 'box-shadow: var(--ls-shadow-raised); border-radius: 6px;'
	};
}
