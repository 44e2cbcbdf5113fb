import { describe, expect, it } from 'vitest';
import { screenGoldenCandidates } from '../../../src/lib/monitoring/golden-screening.ts';
import { MonitoringInputError } from '../../../src/lib/monitoring/errors.ts';
import { latentRows } from '../../helpers/fab.ts';

const names = (p: number) => Array.from({ length: p }, (_, j) => `f${j}`);

describe('screenGoldenCandidates', () => {
	it('leaves out a wafer shifted on one feature (a new direction: orthogonal distance) and names that feature', () => {
		const rows = latentRows(40, 60, 11);
		rows[17] = Float64Array.from(rows[17]);
		rows[17][5] += 3; // ≈ 30× the noise sd of 0.1, invisible to the three latent factors
		const r = screenGoldenCandidates(rows, { featureNames: names(60) });
		const out = r.wafers.filter((w) => w.excluded);
		expect(out.map((w) => w.index)).toContain(17);
		const w17 = r.wafers[17];
		expect(w17.od).toBeGreaterThan(r.odCutoff);
		expect(w17.leading[0].feature).toBe('f5');
		expect(w17.reason).toMatch(/orthogonal distance/);
		expect(w17.reason).toMatch(/f5/);
	});

	it('leaves out a wafer far along the process variation (score distance), n < p', () => {
		const rows = latentRows(30, 200, 12);
		const base = latentRows(1, 200, 99)[0];
		// 8 × the first latent factor's loadings away from the centre, within the model plane
		const far = latentRows(2, 200, 13);
		const dir = Float64Array.from(far[0], (v, j) => v - far[1][j]);
		rows[3] = Float64Array.from(base, (v, j) => 10 + (dir[j] / Math.hypot(...dir)) * 40 + (v - 10) * 0.2);
		const r = screenGoldenCandidates(rows, { featureNames: names(200) });
		expect(r.wafers[3].excluded).toBe(true);
	});

	it('leaves out few good wafers: averaged over 40 seeded golden sets of 40 × 80, about 2.5 % are left out (two cutoffs at α = 0.5 %)', () => {
		// Sizes a fab has after a wet clean (tens of wafers, n < p); two cutoffs at α = 1 % each and
		// MAD-estimated spreads: a few per cent is what the cutoffs allow.
		let flagged = 0;
		let total = 0;
		const rates: number[] = [];
		for (let s = 0; s < 40; s++) {
			const r = screenGoldenCandidates(latentRows(40, 80, 1000 + s), { featureNames: names(80) });
			const f = r.wafers.filter((w) => w.excluded).length;
			flagged += f;
			total += r.wafers.length;
			rates.push(f / r.wafers.length);
		}
		const rate = flagged / total;
		expect(rate).toBeLessThan(0.045);
		expect(Math.max(...rates)).toBeLessThan(0.2);
	});

	it('refuses too few rows, ragged rows and non-finite values', () => {
		const rows = latentRows(10, 5, 1);
		expect(() => screenGoldenCandidates(rows.slice(0, 5), { featureNames: names(5) })).toThrow(MonitoringInputError);
		expect(() => screenGoldenCandidates([...rows.slice(0, 9), new Float64Array(4)], { featureNames: names(5) })).toThrow(/row 9/);
		const bad = rows.map((r) => Float64Array.from(r));
		bad[2][1] = NaN;
		expect(() => screenGoldenCandidates(bad, { featureNames: names(5) })).toThrow(/row 2, feature f1/);
	});
});
