/**
 * False-discovery control over many tests at once: the Benjamini–Hochberg step-up procedure and the
 * Simes combination that goes with it. Written here (about 30 lines) rather than taken from a package
 * because simple-statistics has neither and the registry's stand-alone BH packages are unmaintained;
 * the arithmetic is checked against scipy.stats.false_discovery_control in the tests.
 */
import { MonitoringInputError } from './errors';

/** The outcome of {@link benjaminiHochberg}. */
export interface FdrResult {
	/** BH-adjusted p-values ("q-values"), in the input order: reject i ⇔ adjusted[i] ≤ q. */
	adjusted: Float64Array;
	/** Whether each hypothesis is rejected at level q, in the input order. */
	rejected: boolean[];
	/** How many are rejected. */
	count: number;
}

function check(p: ArrayLike<number>): void {
	if (p.length === 0) throw new MonitoringInputError('no p-values to combine');
	for (let i = 0; i < p.length; i++) {
		if (!(p[i] >= 0 && p[i] <= 1)) throw new MonitoringInputError(`p-value ${i + 1} is ${p[i]}, not in [0, 1]`);
	}
}

/**
 * Benjamini–Hochberg step-up procedure at false-discovery rate q.
 *
 * Formula: order the m p-values p_(1) ≤ … ≤ p_(m); reject the hypotheses of p_(1) … p_(r) where
 * r = max { i : p_(i) ≤ i·q/m }. Adjusted p-values: p̃_(i) = min_{j ≥ i} min(1, m·p_(j)/j), so that
 * hypothesis i is rejected at level q exactly when p̃_i ≤ q. Controls the expected share of false
 * rejections among the rejections at q·m₀/m ≤ q for independent tests and for positively dependent
 * ones (PRDS: Benjamini & Yekutieli 2001, Ann. Statist. 29:1165).
 * Source: Benjamini & Hochberg (1995) J. R. Statist. Soc. B 57:289, §3; adjusted values as in
 * scipy.stats.false_discovery_control(method='bh').
 *
 * @param pValues one p-value per hypothesis, each in [0, 1]
 * @param q the false-discovery rate, in (0, 1)
 * @returns adjusted p-values, rejections and their count
 * @throws MonitoringInputError on an empty list or a p-value outside [0, 1]; RangeError on a bad q
 * @example benjaminiHochberg([0.01, 0.04, 0.03, 0.2], 0.05) // → rejected [true, false, false, false], adjusted [0.04, 0.0533, 0.0533, 0.2]
 */
export function benjaminiHochberg(pValues: ArrayLike<number>, q: number): FdrResult {
	if (!(q > 0 && q < 1)) throw new RangeError('the false-discovery rate q must lie in (0, 1)');
	check(pValues);
	const m = pValues.length;
	const order = Array.from({ length: m }, (_, i) => i).sort((a, b) => pValues[a] - pValues[b]);
	const adjusted = new Float64Array(m);
	let running = 1;
	for (let r = m - 1; r >= 0; r--) {
		const i = order[r];
		running = Math.min(running, (m * pValues[i]) / (r + 1));
		adjusted[i] = Math.min(1, running);
	}
	const rejected = Array.from(adjusted, (a) => a <= q);
	return { adjusted, rejected, count: rejected.filter(Boolean).length };
}

/**
 * Simes' combined p-value of m tests: the smallest BH-adjusted p-value, p_S = min_i m·p_(i)/i.
 * Rejecting "all m nulls hold" when p_S ≤ α has level α for independent tests (Simes 1986) and for
 * positively dependent ones (Sarkar 1998, Ann. Statist. 26:494); it rejects exactly when BH at level α
 * names at least one hypothesis, so a flagged chamber always has at least one named feature.
 * Source: Simes (1986) Biometrika 73:751.
 *
 * @param pValues each in [0, 1]
 * @returns the combined p-value, in [0, 1]
 * @throws MonitoringInputError on an empty list or a p-value outside [0, 1]
 * @example simesCombined([0.01, 0.04, 0.03, 0.2]) // → 0.04 (= 4 · 0.01 / 1)
 */
export function simesCombined(pValues: ArrayLike<number>): number {
	check(pValues);
	const s = Float64Array.from(pValues).sort();
	let best = 1;
	for (let i = 0; i < s.length; i++) best = Math.min(best, (s.length * s[i]) / (i + 1));
	return best;
}
