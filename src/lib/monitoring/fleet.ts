/**
 * Fleet matching: does a chamber's recent mean sit apart from the rest of its fleet, by more than its
 * own wafer-to-wafer noise (and the chamber-to-chamber spread the fleet had when it was qualified)
 * explains? With a false-flag rate set in advance for the whole run, and only the features that pass
 * a false-discovery control named.
 */
import tCdf from '@stdlib/stats-base-dists-t-cdf';
import normalQuantile from '@stdlib/stats-base-dists-normal-quantile';
import { MonitoringInputError } from './errors';
import { benjaminiHochberg, simesCombined } from './fdr';
import { DEFAULT_SCALE_FLOOR, assertFiniteRow, type Row } from './scaling';

/** One chamber's wafers for a recipe step. */
export interface ChamberWafers {
	chamberId: string;
	/** Golden wafers of its approved baseline, in processing order (used when no fleet reference is given). */
	golden: readonly Row[];
	/** Recent wafers, oldest first; the last `window` of them are compared with the fleet. */
	recent: readonly Row[];
}

/**
 * The fleet reference: per feature, the within-chamber variance (pooled over the chambers' golden
 * sets) and the between-chamber variance the fleet had at qualification. Built by
 * {@link fitFleetReference}; plain data, stored with the fleet model.
 */
export interface FleetReference {
	featureNames: string[];
	/** Pooled within-chamber variance σ²_w of each feature (after the near-zero floor). */
	withinVar: Float64Array;
	/** Between-chamber variance τ² of each feature (method of moments, ≥ 0). */
	betweenVar: Float64Array;
	/**
	 * Variance of consecutive 5-wafer block means within a chamber beyond the wafer noise (lot-to-lot
	 * and slow within-chamber variation at qualification; ≥ 0). Absent in references stored before.
	 */
	blockVar?: Float64Array;
	/** Degrees of freedom of σ²_w: Σ (n_c − 1). */
	withinDf: number;
	/** Chambers and golden wafers the reference was built from. */
	chambers: number;
	goldenWafers: number;
}

/** From this many chambers on, the between-chamber spread is estimated robustly (MAD of golden means). */
export const ROBUST_BETWEEN_MIN = 5;
/** Consecutive golden wafers per block for the within-chamber block variance. */
export const FLEET_BLOCK = 5;

/** Lockstep's defaults, each documented where it is used. */
export const FLEET_DEFAULTS = { window: 25, alpha: 0.01, featureFdr: 0.05, minChambers: 3, minGolden: 10, topFeatures: 8 } as const;

export interface FleetOptions {
	featureNames: readonly string[];
	/** Recent wafers per chamber to average (default 25, about one lot). */
	window?: number;
	/** Probability that a run flags any chamber of a fleet of identical chambers (default 1 %). */
	alpha?: number;
	/** False-discovery rate of the features named for a flagged chamber (default 5 %). */
	featureFdr?: number;
	/** Smallest fleet that is compared at all (default 3: a chamber is judged against ≥ 2 others). */
	minChambers?: number;
	/** Golden wafers a chamber needs to enter the reference (default 10). */
	minGolden?: number;
	/** Features reported for a chamber that is not flagged (its closest calls; default 8). */
	topFeatures?: number;
	/** A reference built earlier (the stored fleet model); when given, golden wafers are not read. */
	reference?: FleetReference;
}

/** A feature of one chamber against the fleet. */
export interface SeparatingFeature {
	feature: string;
	/** Chamber window mean − reference mean, in within-chamber standard deviations σ_w (a wafer's σ). */
	offsetSd: number;
	/** The standardized offset: t = d / SE(d) (see {@link compareChambers}); signed. */
	z: number;
	/** Two-sided p-value of t (Student t, ν = Σ(n_c − 1)). */
	pValue: number;
	/** Benjamini–Hochberg adjusted p-value over the chamber's features. */
	qValue: number;
	/** Named: the chamber is flagged and qValue ≤ featureFdr. Only named features may feed the leak rule. */
	flagged: boolean;
}

/** How one chamber compares with the fleet. */
export interface ChamberMatch {
	chamberId: string;
	/** Wafers in the averaged window. */
	wafers: number;
	/** Largest |offset| over the features, in within-chamber σ (descriptive). */
	distance: number;
	/**
	 * The chamber's standardized statistic: the normal score of its adjusted p-value, z = Φ⁻¹(1 − p̃/2),
	 * p̃ = min(1, m · p_Simes) with m the chambers still in the reference when it was tested. Flagged
	 * exactly when z ≥ the run's threshold Φ⁻¹(1 − α/2) (2.576 at α = 1 %).
	 */
	z: number;
	/** Median t over all the chamber's features: its broadband shift (the leak rule reads lines above it). */
	medianZ: number;
	/** Simes' combined p-value over the features, and the fleet-adjusted one (p̃). */
	pValue: number;
	adjustedP: number;
	flagged: boolean;
	/** Flagged chamber: the features named by BH, smallest p first. Otherwise the closest calls, none named. */
	separatingFeatures: SeparatingFeature[];
}

export interface FleetComparison {
	reference: FleetReference;
	alpha: number;
	featureFdr: number;
	/** z threshold Φ⁻¹(1 − α/2). */
	threshold: number;
	window: number;
	chambers: ChamberMatch[];
}

const wrap = (chamberId: string, e: unknown): never => {
	throw new MonitoringInputError(`chamber "${chamberId}": ${(e as Error).message}`, {
		feature: (e as MonitoringInputError).feature,
		row: (e as MonitoringInputError).row
	});
};

/**
 * The fleet reference from each chamber's golden wafers (one-way random-effects layout, chambers as
 * groups).
 *
 * Formulas, per feature j, chamber c with n_c golden wafers, golden mean ḡ_cj and sum of squares SS_cj:
 * - within: σ²_w,j = Σ_c SS_cj / Σ_c (n_c − 1), ν = Σ_c (n_c − 1) degrees of freedom, floored at
 *   (max(10⁻⁶·|mean|, 10⁻⁹))² as the baseline's scaling floor (a constant channel then has a tiny but
 *   finite noise, not 0);
 * - between: τ²_j = max(0, s²(ḡ_·j) − mean_c(σ²_w,j / n_c)), s² the sample variance of the chamber
 *   means — the ANOVA (method-of-moments) estimator, exact in expectation for equal n_c. From 5
 *   chambers on, s² is replaced by (1.4826 · MAD of the chamber means)², so that a chamber already
 *   apart at qualification (a part swap before the golden run) does not inflate everyone's yardstick
 *   and hide itself; with 3–4 chambers a robust spread is too unstable to use.
 * - blocks: σ²_b,j = max(0, (MS_between blocks − MS_within blocks) / 5) over consecutive blocks of 5
 *   golden wafers within each chamber (in the order given: processing order), pooled over chambers —
 *   the nested-ANOVA estimator of the lot-to-lot and slow variation a window mean carries beyond
 *   σ²_w/m (0 for independent wafers, up to noise).
 * Source: Searle, Casella & McCulloch (1992) "Variance Components", Wiley, §3.5 (one-way
 * classification, ANOVA estimation) and §4 (nested classifications); the pooled within variance as in
 * any one-way ANOVA; MAD × 1.4826 (Rousseeuw & Croux 1993, J. Amer. Statist. Assoc. 88:1273).
 *
 * @param chambers chambers with their golden wafers (those with fewer than `minGolden` are left out)
 * @param featureNames feature names, in row order
 * @param options minChambers (default 3), minGolden (default 10)
 * @returns the reference
 * @throws MonitoringInputError when fewer than minChambers chambers have minGolden golden wafers, or
 *   on a bad row (naming chamber, feature and row)
 * @example fitFleetReference(chambers, names).withinVar[0] // → pooled golden variance of feature 0
 */
export function fitFleetReference(
	chambers: readonly Pick<ChamberWafers, 'chamberId' | 'golden'>[],
	featureNames: readonly string[],
	options: { minChambers?: number; minGolden?: number } = {}
): FleetReference {
	const minChambers = options.minChambers ?? FLEET_DEFAULTS.minChambers;
	const minGolden = Math.max(2, options.minGolden ?? FLEET_DEFAULTS.minGolden);
	const p = featureNames.length;
	const used = chambers.filter((c) => c.golden.length >= minGolden);
	if (used.length < minChambers)
		throw new MonitoringInputError(`a fleet reference needs at least ${minChambers} chambers with ${minGolden} golden wafers each, got ${used.length}`);
	const ss = new Float64Array(p);
	const means: Float64Array[] = [];
	let df = 0;
	let wafers = 0;
	for (const c of used) {
		const m = new Float64Array(p);
		c.golden.forEach((x, i) => {
			try {
				assertFiniteRow(x, featureNames, i);
			} catch (e) {
				wrap(c.chamberId, e);
			}
			for (let j = 0; j < p; j++) m[j] += x[j] / c.golden.length;
		});
		for (const x of c.golden) for (let j = 0; j < p; j++) ss[j] += (x[j] - m[j]) ** 2;
		means.push(m);
		df += c.golden.length - 1;
		wafers += c.golden.length;
	}
	// Consecutive blocks of FLEET_BLOCK golden wafers within each chamber (a nested layout): the
	// mean square between block means, pooled over chambers, and within blocks.
	const ssBlocks = new Float64Array(p);
	const ssInBlocks = new Float64Array(p);
	let dfBlocks = 0;
	let dfInBlocks = 0;
	used.forEach((c) => {
		const nb = Math.floor(c.golden.length / FLEET_BLOCK);
		if (nb < 2) return;
		const bm = new Float64Array(p);
		const cm = new Float64Array(p);
		const blockMeans: Float64Array[] = [];
		for (let b = 0; b < nb; b++) {
			bm.fill(0);
			for (let i = b * FLEET_BLOCK; i < (b + 1) * FLEET_BLOCK; i++) for (let j = 0; j < p; j++) bm[j] += c.golden[i][j] / FLEET_BLOCK;
			for (let i = b * FLEET_BLOCK; i < (b + 1) * FLEET_BLOCK; i++) for (let j = 0; j < p; j++) ssInBlocks[j] += (c.golden[i][j] - bm[j]) ** 2;
			blockMeans.push(Float64Array.from(bm));
			for (let j = 0; j < p; j++) cm[j] += bm[j] / nb;
		}
		for (const m of blockMeans) for (let j = 0; j < p; j++) ssBlocks[j] += FLEET_BLOCK * (m[j] - cm[j]) ** 2;
		dfBlocks += nb - 1;
		dfInBlocks += nb * (FLEET_BLOCK - 1);
	});
	const C = used.length;
	const withinVar = new Float64Array(p);
	const betweenVar = new Float64Array(p);
	const blockVar = new Float64Array(p);
	if (dfBlocks > 0 && dfInBlocks > 0)
		for (let j = 0; j < p; j++) blockVar[j] = Math.max(0, (ssBlocks[j] / dfBlocks - ssInBlocks[j] / dfInBlocks) / FLEET_BLOCK);
	for (let j = 0; j < p; j++) {
		let grand = 0;
		for (const m of means) grand += m[j] / C;
		const floor = Math.max(DEFAULT_SCALE_FLOOR.relative * Math.abs(grand), DEFAULT_SCALE_FLOOR.absolute);
		withinVar[j] = Math.max(ss[j] / df, floor * floor);
		let s2 = 0;
		for (const m of means) s2 += (m[j] - grand) ** 2 / (C - 1);
		if (C >= ROBUST_BETWEEN_MIN) {
			// One chamber apart at qualification must not widen everyone's yardstick: the spread of the
			// golden means by the MAD (× 1.4826, consistent for a normal σ) instead of the sample variance.
			const col = means.map((mm) => mm[j]).sort((a, b) => a - b);
			const med = C % 2 ? col[C >> 1] : (col[C / 2 - 1] + col[C / 2]) / 2;
			const dev = col.map((v) => Math.abs(v - med)).sort((a, b) => a - b);
			const mad = C % 2 ? dev[C >> 1] : (dev[C / 2 - 1] + dev[C / 2]) / 2;
			s2 = (1.4826 * mad) ** 2;
		}
		let noise = 0;
		for (const c of used) noise += withinVar[j] / c.golden.length / C;
		betweenVar[j] = Math.max(0, s2 - noise);
	}
	return { featureNames: [...featureNames], withinVar, betweenVar, blockVar, withinDf: df, chambers: C, goldenWafers: wafers };
}

/**
 * Chamber-versus-fleet matching for one recipe step, with a false-flag rate fixed in advance.
 *
 * Method, per feature j, for chamber c with m_c recent wafers (mean x̄_cj) against the set R of the
 * other chambers still in the reference (r = |R|):
 *   d_cj = x̄_cj − (1/r) Σ_{c'∈R} x̄_c'j,
 *   SE²(d_cj) = (τ²_j + σ²_b,j)(1 + 1/r) + σ²_w,j (1/m_c + (1/r²) Σ_{c'∈R} 1/m_c'),
 *   t_cj = d_cj / SE(d_cj), p_cj = 2 P(T_ν > |t_cj|), ν = Σ(n_c − 1)
 * (σ²_w, σ²_b, ν from {@link fitFleetReference}; with τ² = σ²_b = 0 and independent normal wafers
 * t_cj is exactly Student t). τ²_j is the larger of the qualification spread and, from 5 chambers on,
 * the fleet's spread now: (1.4826 · MAD of the window means)² − mean(σ²_w/m_c) − σ²_b — so a chamber
 * is flagged for standing out from what its fleet shows now, not for a fleet-wide phase.
 * The chamber's evidence is Simes' combination p_c = min_i p_c(i)·p/i over its p features (valid
 * under positive dependence, which correlated OES channels have; Simes 1986; Sarkar 1998).
 * Step-down over chambers (Holm 1979, Scand. J. Statist. 6:65, with the outlier re-referencing of
 * Rosner 1983, Technometrics 25:165): among the m chambers still in the reference, the one with the
 * smallest p_c is flagged when m·p_c ≤ α, then leaves the reference, and the rest are tested again,
 * while at least `minChambers` remain. So a fleet of identical chambers is flagged in at most α of the
 * runs, and a chamber far off does not drag the fleet mean onto its neighbours.
 * For a flagged chamber, the features named are those Benjamini–Hochberg (1995) rejects at
 * `featureFdr` over its p features; the flag itself is Simes at α/m, which BH at α/m shares, so a
 * flagged chamber names at least one feature. Assumes wafers independent within the window; lot-to-
 * lot autocorrelation makes the window mean noisier than σ²_w/m and the test liberal (README).
 *
 * @param chambers at least `minChambers` chambers, each with at least one recent wafer
 * @param options see {@link FleetOptions}
 * @returns per-chamber statistic, flag and separating features, with the run's threshold
 * @throws MonitoringInputError on too few chambers, duplicate ids, a chamber without recent wafers,
 *   a reference of other features, or a bad row (naming chamber, feature and row)
 * @example compareChambers(chambers, { featureNames }).chambers.filter((c) => c.flagged) // → e.g. [{ chamberId: 'C07', z: 9.1, … }]
 */
export function compareChambers(chambers: readonly ChamberWafers[], options: FleetOptions): FleetComparison {
	const window = options.window ?? FLEET_DEFAULTS.window;
	const alpha = options.alpha ?? FLEET_DEFAULTS.alpha;
	const fdr = options.featureFdr ?? FLEET_DEFAULTS.featureFdr;
	const minChambers = Math.max(3, options.minChambers ?? FLEET_DEFAULTS.minChambers);
	const top = options.topFeatures ?? FLEET_DEFAULTS.topFeatures;
	if (!(Number.isInteger(window) && window >= 1)) throw new RangeError('window must be a positive integer');
	if (!(alpha > 0 && alpha < 1)) throw new RangeError('alpha must lie in (0, 1)');
	if (!(fdr > 0 && fdr < 1)) throw new RangeError('featureFdr must lie in (0, 1)');
	if (chambers.length < minChambers)
		throw new MonitoringInputError(`fleet matching needs at least ${minChambers} chambers, got ${chambers.length}`);
	const ids = new Set<string>();
	for (const c of chambers) {
		if (ids.has(c.chamberId)) throw new MonitoringInputError(`chamber "${c.chamberId}" appears twice`);
		ids.add(c.chamberId);
		if (c.recent.length === 0) throw new MonitoringInputError(`chamber "${c.chamberId}" has no recent wafers`);
	}
	const names = options.featureNames;
	const p = names.length;
	const ref = options.reference ?? fitFleetReference(chambers, names, { minChambers, minGolden: options.minGolden });
	if (ref.featureNames.length !== p || ref.featureNames.some((f, j) => f !== names[j]))
		throw new MonitoringInputError('the fleet reference was built on other features');

	const C = chambers.length;
	const m = new Float64Array(C);
	const means = chambers.map((c, ci) => {
		const rows = c.recent.slice(-window);
		const mu = new Float64Array(p);
		rows.forEach((x, i) => {
			try {
				assertFiniteRow(x, names, c.recent.length - rows.length + i);
			} catch (e) {
				wrap(c.chamberId, e);
			}
			for (let j = 0; j < p; j++) mu[j] += x[j] / rows.length;
		});
		m[ci] = rows.length;
		return mu;
	});

	// The chamber-to-chamber spread to allow: the larger of the fleet's spread at qualification (τ²)
	// and its spread now — robustly, from 5 chambers on — so that a fleet-wide phase (every window at
	// another stage of clouding, every chamber at another point after its wet clean) does not flag
	// every chamber, while one chamber far off does not widen the yardstick (MAD).
	const tau = Float64Array.from(ref.betweenVar);
	const block = ref.blockVar ?? new Float64Array(p);
	if (C >= ROBUST_BETWEEN_MIN) {
		const col = new Float64Array(C);
		const dev = new Float64Array(C);
		let noise = 0;
		for (let c = 0; c < C; c++) noise += 1 / m[c] / C;
		for (let j = 0; j < p; j++) {
			for (let c = 0; c < C; c++) col[c] = means[c][j];
			col.sort();
			const med = C % 2 ? col[C >> 1] : (col[C / 2 - 1] + col[C / 2]) / 2;
			for (let c = 0; c < C; c++) dev[c] = Math.abs(col[c] - med);
			dev.sort();
			const mad = C % 2 ? dev[C >> 1] : (dev[C / 2 - 1] + dev[C / 2]) / 2;
			const now = (1.4826 * mad) ** 2 - ref.withinVar[j] * noise - block[j];
			if (now > tau[j]) tau[j] = now;
		}
	}

	// Sums over the reference set, kept up to date as chambers leave it.
	const inRef = new Array<boolean>(C).fill(true);
	const sumMean = new Float64Array(p);
	for (const mu of means) for (let j = 0; j < p; j++) sumMean[j] += mu[j];
	let sumInvM = 0;
	for (let c = 0; c < C; c++) sumInvM += 1 / m[c];
	let size = C;

	const test = (c: number) => {
		const r = size - (inRef[c] ? 1 : 0);
		const invM = sumInvM - (inRef[c] ? 1 / m[c] : 0);
		const t = new Float64Array(p);
		const pv = new Float64Array(p);
		const off = new Float64Array(p);
		for (let j = 0; j < p; j++) {
			const refMean = (sumMean[j] - (inRef[c] ? means[c][j] : 0)) / r;
			const d = means[c][j] - refMean;
			const se = Math.sqrt((tau[j] + block[j]) * (1 + 1 / r) + ref.withinVar[j] * (1 / m[c] + invM / (r * r)));
			t[j] = d / se;
			// the lower tail, computed directly: 1 − cdf(|t|) would lose every digit below 1e-16
			pv[j] = Math.min(1, 2 * tCdf(-Math.abs(t[j]), ref.withinDf));
			off[j] = d / Math.sqrt(ref.withinVar[j]);
		}
		return { t, pv, off, pc: simesCombined(pv) };
	};

	const flaggedAt = new Map<number, { pc: number; adjusted: number }>();
	while (size >= minChambers) {
		let best = -1;
		let bestP = 2;
		for (let c = 0; c < C; c++) {
			if (!inRef[c]) continue;
			const { pc } = test(c);
			if (pc < bestP) [best, bestP] = [c, pc];
		}
		if (best < 0 || size * bestP > alpha) break;
		flaggedAt.set(best, { pc: bestP, adjusted: size * bestP });
		inRef[best] = false;
		size--;
		for (let j = 0; j < p; j++) sumMean[j] -= means[best][j];
		sumInvM -= 1 / m[best];
	}

	const zOf = (adjusted: number) => (adjusted >= 1 ? 0 : upperNormalScore(adjusted / 2));
	const out: ChamberMatch[] = chambers.map((ch, c) => {
		const s = test(c);
		const flag = flaggedAt.get(c);
		const pc = flag?.pc ?? s.pc;
		const adjusted = flag?.adjusted ?? Math.min(1, size * s.pc);
		const bh = benjaminiHochberg(s.pv, fdr);
		const order = Array.from({ length: p }, (_, j) => j).sort((a, b) => s.pv[a] - s.pv[b] || Math.abs(s.t[b]) - Math.abs(s.t[a]));
		// The named features (those the false-discovery control keeps) are listed by how far the chamber
		// sits from the fleet in yardstick units: p-values of strong separations all underflow towards 0,
		// and the engineer's question is "what moved most", not "what is most certain".
		const named = flag ? order.filter((j) => bh.rejected[j]).sort((a, b) => Math.abs(s.off[b]) - Math.abs(s.off[a]) || s.pv[a] - s.pv[b]) : [];
		const list = flag ? (named.length ? named : order.slice(0, 1)) : order.slice(0, top);
		let distance = 0;
		for (let j = 0; j < p; j++) distance = Math.max(distance, Math.abs(s.off[j]));
		// with few features their median would be the lines themselves, not the spectrum: 0 below 10
		const sortedT = Float64Array.from(s.t).sort();
		const medianZ = p < 10 ? 0 : p % 2 ? sortedT[p >> 1] : (sortedT[p / 2 - 1] + sortedT[p / 2]) / 2;
		return {
			chamberId: ch.chamberId,
			wafers: m[c],
			distance,
			z: zOf(adjusted),
			medianZ,
			pValue: pc,
			adjustedP: adjusted,
			flagged: flag !== undefined,
			separatingFeatures: list.map((j) => ({
				feature: names[j],
				offsetSd: s.off[j],
				z: s.t[j],
				pValue: s.pv[j],
				qValue: bh.adjusted[j],
				flagged: flag !== undefined && bh.rejected[j]
			}))
		};
	});
	return { reference: ref, alpha, featureFdr: fdr, threshold: -normalQuantile(alpha / 2, 0, 1), window, chambers: out };
}

/**
 * The normal score z with P(Z > z) = q, finite for any q in (0, 0.5].
 * Formula: z = −Φ⁻¹(q) while q ≥ 10⁻¹⁵ (@stdlib's quantile loses every digit below); for smaller q the
 * asymptotic inversion of Mills' ratio, z² ≈ −2 ln q − ln(−2 ln q) − ln 2π, refined by two Newton
 * steps on ln P(Z > z) ≈ ln φ(z) − ln z + ln(1 − 1/z²) (Abramowitz & Stegun 1964, 26.2.12); q is
 * floored at 10⁻³⁰⁰ (z ≈ 37), where the chamber is beyond doubt anyway.
 * @param q upper-tail probability
 * @returns z ≥ 0
 * @example upperNormalScore(0.005) // → 2.5758
 */
export function upperNormalScore(q: number): number {
	if (q >= 0.5) return 0;
	if (q >= 1e-15) return -normalQuantile(q, 0, 1);
	const lq = Math.log(Math.max(q, 1e-300));
	let z = Math.sqrt(-2 * lq - Math.log(-2 * lq) - Math.log(2 * Math.PI));
	for (let i = 0; i < 2; i++) {
		const lt = -0.5 * z * z - 0.5 * Math.log(2 * Math.PI) - Math.log(z) + Math.log(1 - 1 / (z * z));
		// d/dz ln P(Z > z) ≈ −z − 1/z
		z -= (lt - lq) / (-z - 1 / z);
	}
	return z;
}
