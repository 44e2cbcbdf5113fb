/**
 * The alarm rules against their design (alarm-rules.ts): the budget's arithmetic, the drift
 * statistic's in-control ARL on skewed ratios with and without lot-to-lot autocorrelation (the issue's
 * ±20 %), and the per-wafer rates of the gross and k-of-m rules. Seeded Monte Carlo, CI-sized; the
 * fuller run is `node --import tsx bench/drift-arl.ts`.
 */
import { describe, expect, it } from 'vitest';
import { XSadd as XSAdd } from 'ml-xsadd';
import { binomialAtLeast, designRules, evaluateRules, runWarningProbability, TAIL_MARGIN, type ScoredPoint } from '../../../src/lib/monitoring/alarm-rules.ts';
import { driftRunLengths } from '../../helpers/drift-arl.ts';

const policy = { falseAlarmsPer10k: 2, singleEnabled: true, runEnabled: true, runK: 3, runM: 5, ewmaEnabled: true, ewmaLambda: 0.2 };

describe('the budget', () => {
	it('splits B into the gross, run and drift shares (B/4, B/4, B/2 over two statistics)', () => {
		const d = designRules(policy, 1);
		expect(d.grossProbability).toBeCloseTo(2.5e-5, 15);
		// scipy.stats.norm.isf(2.5e-5) = 4.0556269811224
		expect(d.grossScore).toBeCloseTo(4.0556269811224, 6);
		expect(d.driftArl).toBeCloseTo(20_000, 6);
		const p = d.warningProbability;
		expect(p * binomialAtLeast(4, p, 2)).toBeCloseTo(2.5e-5, 12);
		// With the default margin every share is divided by TAIL_MARGIN.
		expect(designRules(policy).driftArl).toBeCloseTo(20_000 * TAIL_MARGIN, 6);
	});

	it('binomial tail by hand: P(Bin(4, ½) ≥ 2) = 11/16', () => {
		expect(binomialAtLeast(4, 0.5, 2)).toBeCloseTo(11 / 16, 14);
	});

	it('refuses a budget or run shape that cannot be designed', () => {
		expect(() => designRules({ ...policy, falseAlarmsPer10k: 0 })).toThrow(RangeError);
		expect(() => runWarningProbability(4, 3, 1e-4)).toThrow(RangeError);
	});
});

describe('drift statistic: in-control ARL on skewed (χ²_3) ratios within ±20 % of design', () => {
	// The law is fitted to each reference stretch (3,000 wafers, as a long training window), so each
	// reference set has its own ARL (Phase I estimation); the design holds on average over sets, as the
	// limits' calibration does. 5 sets × 60 run lengths: se of the mean ≈ 400/√300 ≈ 6 %.
	const average = (lotSd: number, seed: number) => {
		const sets = [0, 1, 2, 3, 4].map((i) => driftRunLengths({ h: 3, lotSd, arl: 400, runs: 60, reference: 3000, seed: seed + i }));
		return { mean: sets.reduce((a, r) => a + r.mean, 0) / sets.length, factors: sets.map((r) => r.factor) };
	};

	it('independent wafers', () => {
		const r = average(0, 100);
		expect(Math.abs(r.mean / 400 - 1)).toBeLessThan(0.2);
	});

	it('lot-to-lot autocorrelation (lots of 25 sharing an offset of 0.35 σ on each component), widened by Zhang’s factor', () => {
		const r = average(0.35, 200);
		expect(Math.abs(r.mean / 400 - 1)).toBeLessThan(0.2);
		expect(Math.max(...r.factors)).toBeGreaterThan(1);
	});

	it('strong lot-to-lot correlation (offset 0.7 σ): the widening errs long, never short', () => {
		// Zhang's factor matches the EWMA's variance, but a smoother path crosses less often: the ARL
		// comes out longer than designed (fewer false alarms), measured ≈ +50 % in bench/drift-arl.ts.
		const r = average(0.7, 300);
		expect(r.mean / 400).toBeGreaterThan(0.8);
	});
});

describe('gross and k-of-m rules: per-wafer rates on skewed ratios (B = 200 per 10,000 so that the rates are measurable)', () => {
	it('fire at their design rates within 25 % (seeded, 200,000 wafers)', () => {
		const big = { ...policy, falseAlarmsPer10k: 200, ewmaEnabled: false };
		const d = designRules(big, 1);
		const rng = new XSAdd(5);
		const chi3 = () => {
			let s = 0;
			for (let j = 0; j < 3; j++) {
				const u = Math.max(rng.random(), 1e-12);
				s += (Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * rng.random())) ** 2;
			}
			return s;
		};
		// Exact law known: a = 0, g = 1/11.3449 (limit at the χ²_3 0.99 quantile, scipy), h = 3.
		const shape = { a: 0, g: 1 / 11.344866730144373, h: 3 };
		const N = 200_000;
		const pts: ScoredPoint[] = Array.from({ length: N }, (_, i) => {
			const t2Ratio = chi3() / 11.344866730144373;
			const qRatio = chi3() / 11.344866730144373;
			return { waferStepId: i, processedAt: i, t2: 0, q: 0, t2Ratio, qRatio, worstRatio: Math.max(t2Ratio, qRatio) };
		});
		const v = evaluateRules([], pts, { shape: { t2: shape, q: shape }, drift: null }, big, d);
		const gross = v.filter((x) => x.rule === 'single').reduce((n, x) => n + (x.detail.beyond as string[]).length, 0);
		// A run "completes" where the wafer is beyond and k − 1 of the m − 1 before it are too: count completions per statistic.
		const runs = v.filter((x) => x.rule === 'run').reduce((n, x) => n + (x.detail.stat as string[]).length, 0);
		expect(Math.abs(gross / (2 * N) / d.grossProbability - 1)).toBeLessThan(0.25);
		expect(Math.abs(runs / (2 * N) / (0.25 * 0.02 / 2) - 1)).toBeLessThan(0.25);
	});
});
