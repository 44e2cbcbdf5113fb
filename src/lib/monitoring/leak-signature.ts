/**
 * The leak-like signature: the one rule that decides when an alarm or a wafer carries the reminder
 * that the site's gas detection, interlocks and safety procedures are authoritative. Every screen and
 * mail asks this file, so the queue, the alarm page, the wafer page and the mails always agree.
 *
 * Lockstep is not a safety system. The rule errs towards showing the reminder (a blended channel
 * counts, a fleet separation needs no share), but it does not call every N₂ wobble a leak: engineers
 * judge a tool by how rarely it cries wolf.
 */
import { contributions, rankContributions } from './contributions';
import { identifyFeature } from './emission-lines';
import type { BaselineModel } from './model';
import type { Row } from './scaling';
import { scoreWafer } from './scoring';

/** What leaked in: air (N₂ bands, CN in carbon chemistry) or backside helium (He I lines). */
export type LeakGas = 'air' | 'helium';

/** The emission-line elements (as named in EMISSION_LINES) that point at each gas. */
export const LEAK_ELEMENTS: Readonly<Record<string, LeakGas>> = { N2: 'air', CN: 'air', He: 'helium' };

/** How many of the ranked contributors the rule reads (the ones a mail or a screen lists). */
export const LEAK_TOP = 5;
/** A leak line must sit this far above its reference, in σ, where the deviation is known. */
export const LEAK_RISE_Z = 3;
/** Risen leak lines that carry at least this share of Q among the top contributors lead it. */
export const LEAK_Q_SHARE = 0.5;

/** One ranked contributor, largest first, as a caller knows it. */
export interface LeakContributor {
	/** feature name; OES channels are named by wavelength (e.g. "oes_337.1") */
	feature: string;
	/** share of the statistic's contributions (0–1); null or absent when not known (fleet separation) */
	share?: number | null;
	/**
	 * signed deviation in σ: golden z (x − golden mean) / golden σ for a wafer, modified z among the
	 * chambers for a fleet separation; null or absent when not known
	 */
	z?: number | null;
}

/**
 * Which evidence the contributors explain: the wafer's Q, its T² (whichever ratio to its limit is
 * larger leads), or the features that set a chamber apart from the fleet.
 */
export type LeakEvidence = 'Q' | 'T²' | 'fleet';

export interface LeakSignature {
	/** gases pointed at, air before helium */
	gases: LeakGas[];
	/** the risen leak-line channels, in the contributors' order */
	channels: string[];
	/** oxygen lines risen with an air signature (air brings O₂; alone they also follow the O₂ flow) */
	supporting: string[];
	evidence: 'Q' | 'fleet';
}

/** The gas an OES feature's lines point at, or null: any N₂/CN band head or He I line within ±1.5 nm. */
export function leakGasOf(feature: string): LeakGas | null {
	const lines = identifyFeature(feature);
	const gas = lines.map((l) => LEAK_ELEMENTS[l.element]).find((g) => g !== undefined);
	return gas ?? null;
}

const risen = (c: LeakContributor) => c.z === undefined || c.z === null || c.z > LEAK_RISE_Z;

/**
 * Decide whether ranked contributors form a leak-like signature.
 *
 * The rule (DOMAIN notes on fault signatures; thresholds are common practice, no published source):
 * 1. Only Q or a fleet separation can be leak-like. A leak adds species the golden wafers never had,
 *    a direction off the model plane, which is what Q measures; a T²-led alarm means a known knob
 *    moved too far (the reading of T² and Q in this engine's README) and is never called leak-like.
 * 2. A leak line is a channel within ±1.5 nm (the spectrometer's resolution, see identifyLines) of an
 *    N₂ second-positive band head (337.1, 357.7, 380.5 nm) or the CN violet band (388.3 nm) — air —
 *    or of a He I line (587.6, 667.8, 706.5 nm) — backside helium. Wavelengths: Pearse & Gaydon
 *    1976; NIST ASD. A channel blended with a neighbouring line counts: the rule errs towards the
 *    reminder.
 * 3. A leak adds light, it never removes it: where the deviation z is known, the line must have
 *    risen more than 3 σ (above the golden mean ± 3σ band the spectrum chart draws; for a fleet
 *    separation every listed feature is already beyond modified z 3.5, so this asks for the chamber
 *    to sit above the fleet, not below). A falling N₂ band is not a leak.
 * 4. Of the first five contributors: for Q, the risen leak lines lead it (the top contributor is one)
 *    or together carry at least half of the share; for a fleet separation, any risen leak line among
 *    the listed features, since each was flagged on its own (Iglewicz & Hoaglin 1993 threshold).
 * Oxygen lines (O I 777.4, 844.6) risen among the same five are returned as supporting evidence when
 * air is named; they never make a signature on their own, since an O₂ flow change moves them too.
 *
 * @param evidence which statistic leads ('Q' | 'T²') or 'fleet' for a fleet separation
 * @param contributors ranked largest first (only the first five are read)
 * @returns the gases and channels, or null when the signature is not leak-like
 * @throws nothing
 * @example leakSignature('Q', [{ feature: 'oes_337.1', share: 0.6, z: 9 }, { feature: 'oes_703.7', share: 0.1, z: 1 }])
 * // → { gases: ['air'], channels: ['oes_337.1'], supporting: [], evidence: 'Q' }
 */
export function leakSignature(evidence: LeakEvidence, contributors: readonly LeakContributor[]): LeakSignature | null {
	if (evidence === 'T²') return null;
	const top = contributors.slice(0, LEAK_TOP);
	const hits = top.filter((c) => risen(c) && leakGasOf(c.feature) !== null);
	if (!hits.length) return null;
	if (evidence === 'Q') {
		const leads = hits[0] === top[0];
		const share = hits.reduce((s, c) => s + (c.share ?? 0), 0);
		if (!leads && !(share >= LEAK_Q_SHARE)) return null;
	}
	const found = new Set(hits.map((c) => leakGasOf(c.feature)!));
	const gases = (['air', 'helium'] as const).filter((g) => found.has(g));
	const supporting = found.has('air')
		? top.filter((c) => c.z !== undefined && c.z !== null && c.z > LEAK_RISE_Z && identifyFeature(c.feature).some((l) => l.element === 'O')).map((c) => c.feature)
		: [];
	return { gases, channels: hits.map((c) => c.feature), supporting, evidence };
}

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
	for (let j = 0; j < model.p; j++) {
		const floor = Math.max(model.scaleFloor.relative * Math.abs(model.mean[j]), model.scaleFloor.absolute);
		z[j] = (x[j] - model.mean[j]) / Math.max(model.sd[j], floor);
	}
	return z;
}

/**
 * The leak-like signature of one wafer against its baseline: {@link leakSignature} applied to the
 * wafer's reconstruction-based Q contributions (Alcala & Qin 2009, Automatica 45:1593), each with its
 * golden z, when Q leads (Q ÷ its limit ≥ T² ÷ its limit) and the wafer is beyond a warning limit
 * (a wafer inside its limits has nothing that leads). RBC is used whatever the screen shows, because
 * it puts a single new species on top even when OES channels are correlated.
 *
 * @param model a fitted baseline
 * @param x the wafer's row in the model's feature order
 * @returns the signature, or null
 * @throws MonitoringInputError when the row has the wrong length or a non-finite value
 * @example waferLeakSignature(model, rowWithN2BandUp)?.gases // → ['air']
 */
export function waferLeakSignature(model: BaselineModel, x: Row): LeakSignature | null {
	const s = scoreWafer(model, x);
	if (s.state === 'ok') return null;
	if (!(s.qRatio >= s.t2Ratio)) return leakSignature('T²', []);
	const z = goldenZ(model, x);
	const index = new Map(model.featureNames.map((f, j) => [f, j]));
	const ranked = rankContributions(contributions(model, x, 'rbc').q, LEAK_TOP);
	return leakSignature('Q', ranked.map((r) => ({ feature: r.feature, share: r.share, z: z[index.get(r.feature)!] })));
}
