/**
 * The leak-like signature: the one rule that decides when an alarm, a wafer or a fleet separation
 * carries the reminder that the site's gas detection, interlocks and safety procedures are
 * authoritative. Every screen and mail asks this file, so the queue, the alarm page, the wafer page,
 * the fleet page and the mails always agree.
 *
 * Lockstep is not a safety system, and the reminder must never be raised on thin evidence: one channel,
 * an unnamed channel, a channel that only sits near a band head, or a feature that is not significant
 * never makes a signature. Engineers judge a tool by how rarely it cries wolf.
 */
import { contributionLimits, contributions, rankContributions } from './contributions';
import { channelGrid } from './emission-lines';
import { BROADBAND_MIN_CHANNELS, LEAK_TOP, leakSignature, medianOf, type LeakSignature } from './leak-rule';
import type { BaselineModel } from './model';
import type { Row } from './scaling';
import { scoreWafer } from './scoring';

export * from './leak-rule';

/**
 * Each feature's golden z: (x_j − mean_j) / σ_j, with σ_j raised to the model's near-zero floor
 * max(relative · |mean_j|, absolute), so that a channel which never moved on the golden wafers
 * (a quiet N₂ band) gets a large z when it moves, not 0 or ∞.
 * Source: the standard score; the floor as in fitScaling (common practice).
 *
 * @param model a fitted baseline
 * @param x the wafer's row in the model's feature order
 * @returns z per feature (length p)
 * @throws nothing (the caller scores the row first, which refuses non-finite values)
 * @example goldenZ(model, model.mean) // → all zeros
 */
export function goldenZ(model: BaselineModel, x: Row): Float64Array {
	const z = new Float64Array(model.p);
	// A near-constant channel is measured in units of the sd the model used for it (floored at its
	// resolution, see fitScaling): one quantisation step is then about 1 σ, not 10⁶ σ.
	const floored = new Map(model.lowVarianceFeatures.map((f) => [f.index, f.floor]));
	for (let j = 0; j < model.p; j++) {
		const floor = Math.max(model.scaleFloor.relative * Math.abs(model.mean[j]), model.scaleFloor.absolute, floored.get(j) ?? 0);
		z[j] = (x[j] - model.mean[j]) / Math.max(model.sd[j], floor);
	}
	return z;
}

/**
 * The leak-like signature of one wafer against its baseline: {@link leakSignature} on the wafer's
 * reconstruction-based Q contributions (Alcala & Qin 2009), each with its golden z and whether it is
 * beyond its RBC control limit (Alcala & Qin 2011, see contributionLimits), when the wafer is beyond
 * a warning limit and Q leads (Q ÷ its limit ≥ T² ÷ its limit). The channel grid is the model's own
 * OES features.
 *
 * @param model a fitted baseline
 * @param x the wafer's row in the model's feature order
 * @returns the signature, or null
 * @throws MonitoringInputError when the row has the wrong length or a non-finite value
 * @example waferLeakSignature(model, rowWithTwoN2BandsUp)?.gases // → ['air']
 */
export function waferLeakSignature(model: BaselineModel, x: Row): LeakSignature | null {
	const s = scoreWafer(model, x);
	if (s.state === 'ok') return null;
	if (!(s.qRatio >= s.t2Ratio)) return leakSignature('T²', []);
	const z = goldenZ(model, x);
	const index = new Map(model.featureNames.map((f, j) => [f, j]));
	const limits = contributionLimits(model).q;
	const ranked = rankContributions(contributions(model, x, 'rbc').q, LEAK_TOP);
	const grid = channelGrid(model.featureNames);
	// the broadband shift: the median golden z of the OES channels (named by a wavelength), when
	// there are enough of them for a median to describe the spectrum rather than the lines themselves
	const oes = model.featureNames.flatMap((f, j) => (channelGrid([f]).length ? [z[j]] : []));
	const broadband = oes.length >= BROADBAND_MIN_CHANNELS ? medianOf(oes) : 0;
	return leakSignature(
		'Q',
		ranked.map((r) => ({ feature: r.feature, share: r.share, z: z[index.get(r.feature)!], significant: r.value > limits[r.feature] })),
		grid,
		broadband
	);
}
