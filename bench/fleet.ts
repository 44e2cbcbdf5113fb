/**
 * Fleet-matching calibration (issue figures): share of runs in which a fleet of identical chambers
 * flags any chamber, and share in which one chamber offset by 2σ on three features is flagged, for
 * fleets of 3, 5, 8, 12, 24 and 40 chambers. Seeded; `node --import tsx bench/fleet.ts [runs]`, or
 * `npm run bench fleet`. Data: tests/helpers/fleet-sim.ts (factor model, 30 golden and 25 recent
 * wafers per chamber, 40 features).
 */
import { compareChambers } from '../src/lib/monitoring/fleet.ts';
import { simulateFleet } from '../tests/helpers/fleet-sim.ts';
import type { BenchFigure } from './figure.ts';

export const FLEET_SIZES = [3, 5, 8, 12, 24, 40];

export function fleetFigures(runs: number, features = 40): { size: number; falseFlag: number; power: number; wrongAlso: number }[] {
	const out = [];
	for (const C of FLEET_SIZES) {
		let any = 0;
		let caught = 0;
		let wrong = 0;
		for (let r = 0; r < runs; r++) {
			const base = { chambers: C, features, golden: 30, recent: 25 };
			const a = simulateFleet(base, 1_000_003 * C + r);
			const ra = compareChambers(a.chambers, { featureNames: a.featureNames, window: 25 });
			if (ra.chambers.some((c) => c.flagged)) any++;
			const b = simulateFleet({ ...base, offsetChamber: 0, offsetSd: 2 }, 2_000_003 * C + r);
			const rb = compareChambers(b.chambers, { featureNames: b.featureNames, window: 25 });
			if (rb.chambers[0].flagged) caught++;
			if (rb.chambers.slice(1).some((c) => c.flagged)) wrong++;
		}
		out.push({ size: C, falseFlag: any / runs, power: caught / runs, wrongAlso: wrong / runs });
	}
	return out;
}

export async function runFleetBench(): Promise<BenchFigure[]> {
	const rows: BenchFigure[] = [];
	for (const f of fleetFigures(300)) {
		rows.push({ name: `fleet of ${f.size}: identical chambers, runs with any flag`, value: 100 * f.falseFlag, unit: '%', target: '≤ 1 %' });
		rows.push({ name: `fleet of ${f.size}: chamber offset 2σ on 3 features, flagged`, value: 100 * f.power, unit: '%', target: '≥ 95 %' });
	}
	return rows;
}

if (import.meta.url === `file://${process.argv[1]}`) {
	const runs = Number(process.argv[2] ?? 1000);
	const t0 = performance.now();
	console.log(`fleet matching, ${runs} seeded runs per fleet size (40 features, 30 golden + 25 recent wafers per chamber)`);
	console.log('| chambers | identical: runs with any flag | offset 2σ × 3 features: flagged | offset run: another chamber flagged too |');
	console.log('|---|---|---|---|');
	for (const f of fleetFigures(runs)) console.log(`| ${f.size} | ${(100 * f.falseFlag).toFixed(1)} % | ${(100 * f.power).toFixed(1)} % | ${(100 * f.wrongAlso).toFixed(1)} % |`);
	console.log(`(${((performance.now() - t0) / 1000).toFixed(0)} s)`);
}
