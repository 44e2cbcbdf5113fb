import { describe, expect, it } from 'vitest';
import { contributions, fitBaseline, rankContributions, scoreWafer } from '../../../src/lib/monitoring';
import { seededNormal } from './helpers';

// Detection and diagnosis on simulated data (3 latent factors, 20 variables, noise sd 0.3).
// Expected behaviour, from the literature:
// - a large single-variable fault is diagnosed correctly by reconstruction-based contributions
//   (Alcala & Qin 2009, Automatica 45:1593, section 4: RBC of the faulty variable is the largest,
//   since M_ij² ≤ M_ii M_jj for a positive semi-definite M);
// - a change that breaks the correlation among variables leaves the model plane and shows in Q
//   while T² may stay small (MacGregor & Kourti 1995, Control Eng. Practice 3:403).
const P = 20;
const g = seededNormal(4242);
const W = [4, 3, 2].map((s) => Array.from({ length: P }, () => s * (0.5 + Math.abs(g()) % 1) * Math.sign(g())));
const draw = (): number[] => {
	const t = [g(), g(), g()];
	return Array.from({ length: P }, (_, j) => 50 + j + W[0][j] * t[0] + W[1][j] * t[1] + W[2][j] * t[2] + 0.3 * g());
};
const featureNames = Array.from({ length: P }, (_, j) => `sensor_${j}`);
const model = fitBaseline(Array.from({ length: 150 }, draw), { featureNames, components: 3 });

describe('detection and diagnosis', () => {
	it.each(Array.from({ length: P }, (_, j) => j))('a 3σ shift in sensor_%i is flagged and tops the RBC list', (j) => {
		for (let rep = 0; rep < 5; rep++) {
			const x = draw();
			x[j] += 3 * model.sd[j];
			const s = scoreWafer(model, x);
			expect(s.qRatio > 1 || s.t2Ratio > 1).toBe(true);
			const c = contributions(model, x, 'rbc');
			const which = s.qRatio >= s.t2Ratio ? c.q : c.t2!;
			expect(rankContributions(which)[0].feature).toBe(`sensor_${j}`);
		}
	});

	it('the same wafers without the shift are mostly quiet (no detection by construction)', () => {
		let alarms = 0;
		for (let i = 0; i < 200; i++) if (scoreWafer(model, draw()).state === 'alarm') alarms++;
		// three statistics at α = 1 % each: a handful of alarms in 200 wafers at most
		expect(alarms).toBeLessThan(12);
	});

	it('a shift that breaks the correlation structure is found by Q but not by T²', () => {
		// The two sensors that move together most strongly in the golden set move apart by 1σ each.
		let best = [0, 1];
		let bestR = -1;
		for (let a = 0; a < P; a++)
			for (let b = a + 1; b < P; b++) {
				let r = 0;
				for (let c = 0; c < 3; c++) r += model.loadings[a * 3 + c] * model.loadings[b * 3 + c] * model.eigenvalues[c];
				if (r > bestR) [bestR, best] = [r, [a, b]];
			}
		let tested = 0;
		for (let i = 0; tested < 20 && i < 500; i++) {
			const x = draw();
			if (scoreWafer(model, x).t2Ratio > 0.5) continue; // start from an ordinary wafer
			tested++;
			x[best[0]] += model.sd[best[0]];
			x[best[1]] -= model.sd[best[1]];
			const s = scoreWafer(model, x);
			expect(s.qRatio).toBeGreaterThan(1);
			expect(s.t2Ratio).toBeLessThan(1);
			const top2 = rankContributions(contributions(model, x, 'rbc').q, 2).map((r) => r.feature).sort();
			expect(top2).toEqual([`sensor_${best[0]}`, `sensor_${best[1]}`].sort());
		}
		expect(tested).toBe(20);
	});
});
