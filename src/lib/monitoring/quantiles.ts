import chisquareQuantile from '@stdlib/stats-base-dists-chisquare-quantile';
import fQuantile from '@stdlib/stats-base-dists-f-quantile';
import normalQuantile from '@stdlib/stats-base-dists-normal-quantile';

// Quantiles come from @stdlib (a maintained, tested numerical library), never hand-written series.

function checkAlpha(alpha: number): void {
	if (!(alpha > 0 && alpha < 1)) throw new RangeError(`α must lie in (0, 1), got ${alpha}`);
}

/**
 * Upper critical value of the F distribution: the x with P(F(d1, d2) > x) = α.
 *
 * Formula: F_α(d1, d2) = F⁻¹(1 − α; d1, d2), the inverse of the regularised incomplete beta function.
 * Source: @stdlib/stats-base-dists-f-quantile; tabulated in NIST/SEMATECH e-Handbook of Statistical
 * Methods, §1.3.6.7.3.
 *
 * @param alpha upper-tail probability, 0 < α < 1
 * @param d1 numerator degrees of freedom (> 0)
 * @param d2 denominator degrees of freedom (> 0)
 * @returns the critical value
 * @throws RangeError if α or a degree of freedom is out of range
 * @example fUpper(0.05, 5, 10) // → 3.3258…
 */
export function fUpper(alpha: number, d1: number, d2: number): number {
	checkAlpha(alpha);
	if (!(d1 > 0 && d2 > 0)) throw new RangeError(`F degrees of freedom must be > 0, got (${d1}, ${d2})`);
	return fQuantile(1 - alpha, d1, d2);
}

/**
 * Upper critical value of the χ² distribution: the x with P(χ²(k) > x) = α; k need not be an integer.
 *
 * Formula: χ²_α(k) = 2 · P⁻¹(k/2, 1 − α), P the regularised lower incomplete gamma function.
 * Source: @stdlib/stats-base-dists-chisquare-quantile; tabulated in NIST/SEMATECH e-Handbook §1.3.6.7.4.
 *
 * @param alpha upper-tail probability, 0 < α < 1
 * @param k degrees of freedom (> 0, real)
 * @returns the critical value
 * @throws RangeError if α or k is out of range
 * @example chiSquareUpper(0.05, 10) // → 18.307…
 */
export function chiSquareUpper(alpha: number, k: number): number {
	checkAlpha(alpha);
	if (!(k > 0)) throw new RangeError(`χ² degrees of freedom must be > 0, got ${k}`);
	return chisquareQuantile(1 - alpha, k);
}

/**
 * Upper critical value of the standard normal distribution: z_α with P(Z > z_α) = α.
 *
 * Formula: z_α = Φ⁻¹(1 − α) = √2 · erf⁻¹(1 − 2α).
 * Source: @stdlib/stats-base-dists-normal-quantile; tabulated in NIST/SEMATECH e-Handbook §1.3.6.7.1.
 *
 * @param alpha upper-tail probability, 0 < α < 1
 * @returns z_α
 * @throws RangeError if α is out of range
 * @example normalUpper(0.025) // → 1.95996…
 */
export function normalUpper(alpha: number): number {
	checkAlpha(alpha);
	return normalQuantile(1 - alpha, 0, 1);
}

/**
 * Two-sided critical value of Student's t: t with P(|T(ν)| > t) = α.
 *
 * Formula: t_{α/2}(ν)² = F_α(1, ν), so t = √F_α(1, ν) — an identity of the distributions (e.g.
 * Johnson, Kotz & Balakrishnan, "Continuous Univariate Distributions" vol. 2, 1995, ch. 27), which
 * spares a separate t package.
 * Source: via @stdlib/stats-base-dists-f-quantile; tabulated in NIST/SEMATECH e-Handbook §1.3.6.7.2.
 *
 * @param alpha two-sided probability, 0 < α < 1
 * @param nu degrees of freedom (> 0)
 * @returns the critical value
 * @throws RangeError if α or ν is out of range
 * @example tTwoSided(0.05, 10) // → 2.2281…
 */
export function tTwoSided(alpha: number, nu: number): number {
	return Math.sqrt(fUpper(alpha, 1, nu));
}
