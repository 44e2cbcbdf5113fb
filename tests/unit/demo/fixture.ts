/**
 * The demo's small variant (no real-volume tail: its month is the full demo's first 27 days plus 3
 * more compressed ones, the data the e2e suite seeds), generated once per test file, with helpers to
 * slice it. The real-volume tail has its own test (volume.test.ts), which streams it.
 */
import {
	buildScenario,
	generateWaferSteps,
	type DemoScenario,
	type DemoWaferStep
} from '../../../seeds/demo/index';

let cached: { scenario: DemoScenario; rows: DemoWaferStep[] } | null = null;

export function demo(): { scenario: DemoScenario; rows: DemoWaferStep[] } {
	if (!cached) {
		const scenario = buildScenario({ realVolumeDays: 0 });
		cached = { scenario, rows: [...generateWaferSteps(scenario)] };
	}
	return cached;
}

/** Index of a feature of a recipe step; throws when missing so a renamed column fails loudly. */
export function col(scenario: DemoScenario, recipe: string, step: string, name: string): number {
	const i = scenario.features[recipe][step].findIndex((f) => f.name === name);
	if (i < 0) throw new Error(`no feature ${name} in ${recipe}/${step}`);
	return i;
}

export function rowsOf(rows: DemoWaferStep[], chamber: string, step: string): DemoWaferStep[] {
	return rows.filter((r) => r.chamberCode === chamber && r.step === step);
}

export const mean = (a: number[]) => a.reduce((s, v) => s + v, 0) / a.length;
export const sd = (a: number[]) => {
	const m = mean(a);
	return Math.sqrt(a.reduce((s, v) => s + (v - m) ** 2, 0) / (a.length - 1));
};
export const median = (a: number[]) => {
	const s = [...a].sort((x, y) => x - y);
	const h = s.length >> 1;
	return s.length % 2 ? s[h] : (s[h - 1] + s[h]) / 2;
};
export function pearson(a: number[], b: number[]): number {
	const ma = mean(a);
	const mb = mean(b);
	let ab = 0;
	let aa = 0;
	let bb = 0;
	for (let i = 0; i < a.length; i++) {
		ab += (a[i] - ma) * (b[i] - mb);
		aa += (a[i] - ma) ** 2;
		bb += (b[i] - mb) ** 2;
	}
	return ab / Math.sqrt(aa * bb);
}

/**
 * Wafers since the chamber's last wet clean for each wafer-step (both steps of a wafer share it),
 * counted from the data and the maintenance log as Lockstep would; null before the first clean in
 * the window.
 */
export function wafersSinceClean(
	scenario: DemoScenario,
	rows: DemoWaferStep[]
): Map<DemoWaferStep, number | null> {
	const cleans = new Map<string, number[]>();
	for (const m of scenario.maintenance)
		if (m.kind === 'wet_clean')
			cleans.set(m.chamberCode, [...(cleans.get(m.chamberCode) ?? []), m.at.getTime()]);
	const state = new Map<string, { next: number; n: number | null; wafer: string }>();
	const out = new Map<DemoWaferStep, number | null>();
	for (const r of rows) {
		const list = cleans.get(r.chamberCode) ?? [];
		let s = state.get(r.chamberCode);
		if (!s) {
			s = { next: list.findIndex((t) => t > scenario.start.getTime()), n: null, wafer: '' };
			if (s.next < 0) s.next = list.length;
			state.set(r.chamberCode, s);
		}
		if (r.waferId !== s.wafer) {
			if (s.n !== null) s.n++;
			while (s.next < list.length && list[s.next] <= r.processedAt.getTime()) {
				s.n = 0;
				s.next++;
			}
			s.wafer = r.waferId;
		}
		out.set(r, s.n);
	}
	return out;
}
