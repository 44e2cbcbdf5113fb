import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { buildScenario, generateWaferSteps, type DemoWaferStep } from '../../../seeds/demo/index';
import { col, demo } from './fixture';

function digest(rows: Iterable<DemoWaferStep>): { hash: string; n: number } {
	const h = createHash('sha256');
	let n = 0;
	for (const r of rows) {
		h.update(
			`${r.waferId},${r.lotId},${r.slot},${r.chamberCode},${r.recipe},${r.step},${r.processedAt.getTime()},${r.golden}\n`
		);
		h.update(Buffer.from(r.values.buffer));
		n++;
	}
	return { hash: h.digest('hex'), n };
}

describe('demo wafer-steps', () => {
	const { scenario, rows } = demo();

	it('are byte-identical for the same seed and differ for another', () => {
		const a = digest(rows);
		const b = digest(generateWaferSteps(buildScenario({ realVolumeDays: 0 })));
		expect(b).toEqual(a);
		const sc = buildScenario({ realVolumeDays: 0 });
		const c = digest(generateWaferSteps(sc, { seed: sc.seed + 1 }));
		expect(c.hash).not.toBe(a.hash);
	});

	it('number 20,000–35,000, every wafer with each step of its recipe once', () => {
		expect(rows.length).toBeGreaterThanOrEqual(20_000);
		expect(rows.length).toBeLessThanOrEqual(35_000);
		const steps = new Map<string, string[]>();
		for (const r of rows) steps.set(r.waferId, [...(steps.get(r.waferId) ?? []), r.step]);
		for (const r of scenario.recipes) {
			const expected = r.steps.map((s) => s.name);
			const wafers = [...new Set(rows.filter((x) => x.recipe === r.code).map((x) => x.waferId))];
			for (const w of wafers) expect(steps.get(w)).toEqual(expected);
		}
	});

	it('come in processedAt order, inside the window, at whole seconds', () => {
		let last = -Infinity;
		for (const r of rows) {
			const t = r.processedAt.getTime();
			expect(t).toBeGreaterThanOrEqual(last);
			last = t;
		}
		expect(rows[0].processedAt.getTime()).toBeGreaterThanOrEqual(scenario.start.getTime());
		expect(last).toBeLessThan(scenario.end.getTime());
		expect(rows.every((r) => r.processedAt.getTime() % 1000 === 0)).toBe(true);
	});

	it('carry lots of at most 25 wafers with distinct slots 1–25, each lot on one tool', () => {
		const lots = new Map<string, DemoWaferStep[]>();
		for (const r of rows) lots.set(r.lotId, [...(lots.get(r.lotId) ?? []), r]);
		const tool = new Map(scenario.chambers.map((c) => [c.code, c.toolCode]));
		let full = 0;
		for (const [lot, rs] of lots) {
			const slots = [...new Set(rs.map((r) => r.slot))];
			expect(slots.length).toBeLessThanOrEqual(25);
			expect(slots.every((s) => s >= 1 && s <= 25)).toBe(true);
			expect(new Set(rs.map((r) => r.waferId)).size).toBe(slots.length);
			expect(new Set(rs.map((r) => tool.get(r.chamberCode))).size).toBe(1);
			expect(rs.every((r) => r.waferId.startsWith(lot))).toBe(true);
			if (slots.length === 25) full++;
		}
		expect(full / lots.size).toBeGreaterThan(0.6);
	});

	it('give every chamber × recipe step ≥ 40 golden wafers and each recipe step a fleet of ≥ 8 chambers', () => {
		for (const c of scenario.chambers)
			for (const recipe of c.recipes)
				for (const st of scenario.recipes.find((r) => r.code === recipe)!.steps) {
					const mine = rows.filter(
						(r) => r.chamberCode === c.code && r.recipe === recipe && r.step === st.name
					);
					expect(
						mine.filter((r) => r.golden).length,
						`${c.code} ${recipe}/${st.name}`
					).toBeGreaterThanOrEqual(40);
				}
		for (const r of scenario.recipes)
			for (const st of r.steps) {
				const chambers = new Set(
					rows.filter((x) => x.recipe === r.code && x.step === st.name).map((x) => x.chamberCode)
				);
				expect(chambers.size).toBeGreaterThanOrEqual(8);
			}
	});

	it('mark both steps of a wafer alike and no golden wafer inside an episode (or before the swap)', () => {
		const g = new Map<string, boolean>();
		for (const r of rows) {
			if (g.has(r.waferId)) expect(r.golden).toBe(g.get(r.waferId));
			g.set(r.waferId, r.golden);
		}
		for (const e of scenario.episodes) {
			const mine = rows.filter((r) => r.chamberCode === e.chamberCode && r.golden);
			const inside = (t: Date) => t >= e.start && (e.end === null || t < e.end);
			if (e.kind === 'part_swap_offset') expect(mine.every((r) => r.processedAt >= e.start)).toBe(true);
			else expect(mine.some((r) => inside(r.processedAt))).toBe(false);
		}
	});

	it('report values aligned with the feature catalog, finite, with rf_on_s near the step time', () => {
		for (const r of rows) {
			expect(r.values.length).toBe(scenario.features[r.recipe][r.step].length);
		}
		expect(rows.every((r) => r.values.every(Number.isFinite))).toBe(true);
		for (const rec of scenario.recipes)
			for (const st of rec.steps) {
				const i = col(scenario, rec.code, st.name, 'rf_on_s');
				const on = rows.filter((r) => r.recipe === rec.code && r.step === st.name).map((r) => r.values[i]);
				const m = on.reduce((a, b) => a + b, 0) / on.length;
				expect(Math.abs(m - st.durationS) / st.durationS).toBeLessThan(0.05);
			}
	});

	it('match the counts stated in seeds/demo/README.md', () => {
		const readme = readFileSync('seeds/demo/README.md', 'utf8').replace(/\s+/g, ' ');
		const n = (x: number) => x.toLocaleString('en-US');
		expect(readme).toContain(`${n(rows.length)} wafer-steps`);
		expect(readme).toContain(`${n(new Set(rows.map((r) => r.waferId)).size)} wafers`);
		expect(readme).toContain(`${n(new Set(rows.map((r) => r.lotId)).size)} lots`);
		expect(readme).toContain(`${n(rows.filter((r) => r.golden).length)} golden wafer-steps`);
		expect(readme).toContain(
			`${scenario.features['PRS-60'].over_strip.filter((f) => f.kind === 'oes').length} OES channels`
		);
	});
});
