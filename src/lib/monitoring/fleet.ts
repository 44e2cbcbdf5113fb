import { fitBaseline, type FitOptions } from './baseline';
import { MonitoringInputError } from './errors';
import type { BaselineModel } from './model';
import { MODIFIED_Z_THRESHOLD, modifiedZScores } from './robust';
import { assertFiniteRow, type Row } from './scaling';
import { scoreWafer } from './scoring';

/** One chamber's wafers for a recipe step. */
export interface ChamberWafers {
	chamberId: string;
	/** Golden (qualified) wafers, pooled into the fleet model. */
	golden: readonly Row[];
	/** Recent wafers, oldest first; the last `window` of them are compared with the fleet. */
	recent: readonly Row[];
}

/** Options of {@link compareChambers}. */
export interface FleetOptions extends Omit<FitOptions, 'featureNames'> {
	featureNames: readonly string[];
	/** Recent wafers per chamber to summarise (default 25, about one lot). */
	window?: number;
	/** Flag a chamber whose modified z exceeds this (default 3.5, Iglewicz & Hoaglin 1993). */
	threshold?: number;
	/** Separating features to report per chamber (default 5). */
	topFeatures?: number;
	/** A fleet model fitted earlier; when given, golden wafers are not refitted. */
	model?: BaselineModel;
}

/** A feature on which a chamber sits apart from the fleet. */
export interface SeparatingFeature {
	feature: string;
	/** Modified z of the chamber's window mean among all chambers' window means, this feature. */
	modifiedZ: number;
	/** Chamber window mean − fleet median of window means, in fleet golden standard deviations. */
	offsetSd: number;
	/** |modifiedZ| > threshold. */
	flagged: boolean;
}

/** How one chamber compares with the fleet. */
export interface ChamberMatch {
	chamberId: string;
	/** Wafers in the summarised window. */
	wafers: number;
	/** T², Q and φ of the window mean against the fleet model. */
	t2: number;
	q: number;
	/** The chamber's distance from the fleet: φ of its window mean. */
	distance: number;
	/** Modified z of the distance among the chambers. */
	modifiedZ: number;
	/** modifiedZ > threshold (only "farther than the others" is flagged). */
	flagged: boolean;
	separatingFeatures: SeparatingFeature[];
}

/** The result of a fleet comparison. */
export interface FleetComparison {
	model: BaselineModel;
	threshold: number;
	window: number;
	medianDistance: number;
	madDistance: number;
	chambers: ChamberMatch[];
}

/**
 * Chamber-versus-fleet matching for one recipe step.
 *
 * Method: (1) a fleet baseline from the pooled golden wafers of all chambers, one scaling (unless a
 * model is given); (2) each chamber summarised by the mean of its last `window` wafers, scaled by
 * the fleet scaling and scored: distance d_c = φ(mean) = Q/δ² + T²/χ²_α(k) (Yue & Qin 2001);
 * (3) M_c = 0.6745 (d_c − median d) / MAD(d), a chamber flagged when M_c > 3.5 (Iglewicz &
 * Hoaglin 1993); (4) per feature, the modified z of the chambers' scaled window means names the
 * features that separate a chamber from the others.
 * Source: Iglewicz & Hoaglin (1993) §3; Yue & Qin (2001) Ind. Eng. Chem. Res. 40:4403. The pooling
 * of golden wafers into a fleet model is common practice in chamber matching.
 *
 * @param chambers at least 3 chambers, each with golden and at least one recent wafer
 * @param options fit options plus window, threshold, topFeatures, model
 * @returns per-chamber distance, modified z, flag and separating features
 * @throws MonitoringInputError on fewer than 3 chambers, a chamber without recent wafers, duplicate
 *   chamber ids, or a bad row (naming chamber, feature and row)
 * @example compareChambers(chambers, { featureNames }).chambers.filter((c) => c.flagged) // → e.g. [{ chamberId: 'C07', … }]
 */
export function compareChambers(chambers: readonly ChamberWafers[], options: FleetOptions): FleetComparison {
	const window = options.window ?? 25;
	const threshold = options.threshold ?? MODIFIED_Z_THRESHOLD;
	const topFeatures = options.topFeatures ?? 5;
	if (chambers.length < 3)
		throw new MonitoringInputError(`fleet matching needs at least 3 chambers, got ${chambers.length}`);
	if (!(Number.isInteger(window) && window >= 1)) throw new RangeError('window must be a positive integer');
	const ids = new Set<string>();
	for (const c of chambers) {
		if (ids.has(c.chamberId)) throw new MonitoringInputError(`chamber "${c.chamberId}" appears twice`);
		ids.add(c.chamberId);
		if (c.recent.length === 0) throw new MonitoringInputError(`chamber "${c.chamberId}" has no recent wafers`);
	}
	const featureNames = options.featureNames;
	const p = featureNames.length;
	const model =
		options.model ??
		fitBaseline(
			chambers.flatMap((c) => c.golden),
			options
		);
	if (model.p !== p) throw new MonitoringInputError('the given fleet model has different features');

	const means = chambers.map((c) => {
		const rows = c.recent.slice(-window);
		const m = new Float64Array(p);
		rows.forEach((x, i) => {
			try {
				assertFiniteRow(x, featureNames, c.recent.length - rows.length + i);
			} catch (e) {
				throw new MonitoringInputError(`chamber "${c.chamberId}": ${(e as Error).message}`, {
					feature: (e as MonitoringInputError).feature,
					row: (e as MonitoringInputError).row
				});
			}
			for (let j = 0; j < p; j++) m[j] += x[j] / rows.length;
		});
		return { m, wafers: rows.length };
	});
	const scores = means.map(({ m }) => scoreWafer(model, m));
	const distances = scores.map((s) => s.phi);
	const mz = modifiedZScores(distances);

	// Per-feature modified z across chambers of the scaled window means.
	const C = chambers.length;
	const featureZ = new Float64Array(C * p);
	const offset = new Float64Array(C * p);
	const column = new Float64Array(C);
	for (let j = 0; j < p; j++) {
		const sdj = model.sd[j] > 0 ? model.sd[j] : model.scale[j];
		for (let c = 0; c < C; c++) column[c] = means[c].m[j];
		const z = modifiedZScores(column);
		for (let c = 0; c < C; c++) {
			featureZ[c * p + j] = z.scores[c];
			offset[c * p + j] = (column[c] - z.median) / sdj;
		}
	}
	return {
		model,
		threshold,
		window,
		medianDistance: mz.median,
		madDistance: mz.mad,
		chambers: chambers.map((c, ci) => {
			const order = Array.from({ length: p }, (_, j) => j).sort(
				(a, b) => Math.abs(featureZ[ci * p + b]) - Math.abs(featureZ[ci * p + a])
			);
			return {
				chamberId: c.chamberId,
				wafers: means[ci].wafers,
				t2: scores[ci].t2,
				q: scores[ci].q,
				distance: distances[ci],
				modifiedZ: mz.scores[ci],
				flagged: mz.scores[ci] > threshold,
				separatingFeatures: order.slice(0, topFeatures).map((j) => ({
					feature: featureNames[j],
					modifiedZ: featureZ[ci * p + j],
					offsetSd: offset[ci * p + j],
					flagged: Math.abs(featureZ[ci * p + j]) > threshold
				}))
			};
		})
	};
}
