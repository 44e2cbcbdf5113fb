import type { BaselineModel } from './model';

/** Mean and standard deviation of a statistic for in-control new wafers, in units of its action limit. */
export interface RatioMoments {
	t2: { mean: number; sd: number };
	q: { mean: number; sd: number };
}

/**
 * In-control moments of T²/limit and Q/limit for new wafers, from the model's own distributional
 * assumptions (not from the golden wafers' in-sample scores, which are biased low for Q).
 *
 * Formula: T² of a new wafer = c·F(k, n − k) with c = k(n−1)(n+1)/(n(n−k)) (Tracy, Young & Mason
 * 1992), so E = c·d2/(d2 − 2) and Var = c²·2d2²(d1 + d2 − 2)/(d1(d2 − 2)²(d2 − 4)) with d1 = k,
 * d2 = n − k (moments of the F distribution: Johnson, Kotz & Balakrishnan 1995, "Continuous
 * Univariate Distributions" vol. 2, ch. 27). Q ≈ g·χ²(h) with g = θ2/θ1, h = θ1²/θ2 (Box 1954;
 * Nomikos & MacGregor 1995), so E = θ1 and Var = 2θ2. Each is divided by its action limit.
 * Used as the in-control level of the EWMA charts (Lucas & Saccucci 1990).
 *
 * @param model a fitted baseline
 * @returns the moments of both ratios; the T² sd is NaN when n − k ≤ 4 (the variance does not exist)
 * @throws nothing (degenerate cases give NaN, as stated)
 * @example ratioMoments(model).q.mean // → θ1 / Q limit, typically ≈ 0.3–0.5 at α = 0.01
 */
export function ratioMoments(model: BaselineModel): RatioMoments {
	const { n, k, residual, limits } = model;
	const d1 = k;
	const d2 = n - k;
	const c = (k * (n - 1) * (n + 1)) / (n * (n - k));
	const t2Mean = d2 > 2 ? (c * d2) / (d2 - 2) : Number.NaN;
	const t2Var = d2 > 4 ? (c * c * 2 * d2 * d2 * (d1 + d2 - 2)) / (d1 * (d2 - 2) ** 2 * (d2 - 4)) : Number.NaN;
	return {
		t2: { mean: t2Mean / limits.t2, sd: Math.sqrt(t2Var) / limits.t2 },
		q: { mean: residual.theta1 / limits.q, sd: Math.sqrt(2 * residual.theta2) / limits.q }
	};
}
