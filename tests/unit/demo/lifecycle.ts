/**
 * The demo seed's baseline lifecycle (seeds/demo-replay.ts), replayed in memory with Lockstep's own
 * engine so the demo data are judged as the product will judge them: rows as the CSV carries them
 * (6 significant digits) plus the ingest's actinometry ratios; a chamber × step's first baseline once
 * it has 40 golden wafers (then its earlier wafers are rescored); after each wet clean or part swap a
 * rebuild from the latest ≤ 80 golden wafers once 12 golden wafers follow it; automatic k (broken
 * stick), autoscaling, α = 1 %; each day's wafers scored with the baseline active when they arrive;
 * the first 30 wafer-steps after a wet clean are the seasoning window. The one thing done differently
 * from the seed: the day's maintenance is known before its wafers are scored (see the test's note).
 */
import {
	appendActinometry,
	fitBaseline,
	planActinometry,
	scoreBatch,
	type BaselineModel
} from '../../../src/lib/monitoring/index';
import type { DemoScenario, DemoWaferStep } from '../../../seeds/demo/index';

const DAY = 86_400_000;
export const LIFECYCLE = {
	firstGolden: 40,
	requalifyGolden: 12,
	maxGolden: 80,
	seasoningWafers: 30
} as const;

export interface LifecycleScore {
	row: DemoWaferStep;
	t2Ratio: number;
	qRatio: number;
	seasoning: boolean;
	/** Baselines built for this chamber × step up to and including the one that scored the row. */
	version: number;
}

const round6 = (v: number) => Number(v.toPrecision(6));

/** Scores of one chamber × step under the lifecycle; rows before the first baseline are rescored by it. */
export function replayLifecycle(scenario: DemoScenario, rows: DemoWaferStep[]): LifecycleScore[] {
	if (rows.length === 0) return [];
	const { chamberCode, recipe, step } = rows[0];
	const names = scenario.features[recipe][step].map((f) => f.name);
	const plan = planActinometry(
		scenario.features[recipe][step].filter((f) => f.kind === 'oes').map((f) => f.name),
		0.5
	);
	const values = rows.map((r) => appendActinometry(plan, Float64Array.from(r.values, round6)));
	const featureNames = [...names, ...plan.ratios.map((r) => r.name)];
	const cleans = scenario.maintenance
		.filter((m) => m.chamberCode === chamberCode && m.kind === 'wet_clean')
		.map((m) => m.at.getTime());
	const requalify = scenario.maintenance
		.filter((m) => m.chamberCode === chamberCode && (m.kind === 'wet_clean' || m.kind === 'part_swap'))
		.map((m) => m.at.getTime());
	const seasoning = new Set<number>();
	for (const c of cleans) {
		let n = 0;
		rows.forEach((r, i) => {
			if (r.processedAt.getTime() > c && n < LIFECYCLE.seasoningWafers) (seasoning.add(i), n++);
		});
	}
	const out: LifecycleScore[] = new Array(rows.length);
	let model: BaselineModel | null = null;
	let approvedAt = 0;
	let version = 0;
	const fit = (upTo: number) => {
		const golden = rows.flatMap((r, i) => (r.golden && i < upTo ? [i] : [])).slice(-LIFECYCLE.maxGolden);
		return fitBaseline(
			golden.map((i) => values[i]),
			{ featureNames, components: 'auto', scaling: 'autoscale', alpha: 0.01 }
		);
	};
	const score = (from: number, to: number) => {
		if (!model || to <= from) return;
		const s = scoreBatch(model, values.slice(from, to));
		for (let i = from; i < to; i++)
			out[i] = {
				row: rows[i],
				t2Ratio: s.t2[i - from] / model.limits.t2,
				qRatio: s.q[i - from] / model.limits.q,
				seasoning: seasoning.has(i),
				version
			};
	};
	const end = scenario.end.getTime();
	let i = 0;
	for (let dayEnd = scenario.start.getTime() + DAY; ; dayEnd = Math.min(dayEnd + DAY, end)) {
		const from = i;
		while (i < rows.length && rows[i].processedAt.getTime() < dayEnd) i++;
		score(from, i);
		const golden = rows.slice(0, i).filter((r) => r.golden);
		if (!model) {
			if (golden.length >= LIFECYCLE.firstGolden) {
				model = fit(i);
				approvedAt = dayEnd;
				version = 1;
				score(0, i);
			}
		} else {
			const since = Math.max(0, ...requalify.filter((t) => t <= dayEnd));
			const fresh = golden.filter((r) => r.processedAt.getTime() > since).length;
			if (since > approvedAt && fresh >= LIFECYCLE.requalifyGolden) {
				model = fit(i);
				approvedAt = dayEnd;
				version++;
			}
		}
		if (dayEnd >= end) break;
	}
	return out.filter(Boolean);
}
