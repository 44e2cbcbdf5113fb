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
import { channelGrid, identifyFeature, type ChannelGrid, type EmissionLine } from './emission-lines';
import type { BaselineModel } from './model';
import type { Row } from './scaling';
import { scoreWafer } from './scoring';

/** What leaked in: air (nitrogen features) or backside helium (He I lines). */
export type LeakGas = 'air' | 'helium';

/** The line-table elements that point at each gas: nitrogen-bearing species for air, He I for helium. */
export const LEAK_ELEMENTS: Readonly<Record<string, LeakGas>> = { N2: 'air', 'N2+': 'air', N: 'air', CN: 'air', He: 'helium' };
/** The N₂ band systems (second positive, first negative): with oxygen risen, one of them suffices. */
const N2_BANDS = new Set(['N2', 'N2+']);

/** How many of the ranked Q contributors the rule reads (the ones a mail or a screen lists). */
export const LEAK_TOP = 5;
/** A leak line must sit this far above its reference, in σ. */
export const LEAK_RISE_Z = 3;
/** Risen leak lines that carry at least this share of Q among the top contributors lead it. */
export const LEAK_Q_SHARE = 0.5;
/** Fewest OES channels for their median to stand for the broadband shift (else 0 is used). */
export const BROADBAND_MIN_CHANNELS = 10;
/** Distinct lines of one gas needed, unless an N₂ band comes with oxygen risen. */
export const LEAK_MIN_LINES = 2;

/** One contributor as a caller knows it. */
export interface LeakContributor {
	/** feature name; OES channels are named by wavelength (e.g. "oes_337.1") */
	feature: string;
	/** share of Q among the contributions (0–1); Q evidence only */
	share?: number | null;
	/**
	 * signed deviation in σ: golden z for a wafer, the standardized offset t for a fleet separation.
	 * Unknown (null or absent) never counts as risen.
	 */
	z?: number | null;
	/**
	 * the feature is significant: its RBC beyond its control limit (Q evidence), or named by the
	 * fleet's false-discovery control (fleet evidence). Unknown never counts.
	 */
	significant?: boolean | null;
}

/** Which evidence the contributors explain: the wafer's Q, its T², or a fleet separation. */
export type LeakEvidence = 'Q' | 'T²' | 'fleet';

export interface LeakSignature {
	/** gases pointed at, air before helium */
	gases: LeakGas[];
	/** the risen, significant leak-line channels, in the contributors' order */
	channels: string[];
	/** oxygen lines risen and significant with an air signature */
	supporting: string[];
	evidence: 'Q' | 'fleet';
}

/** The line an OES feature is named after (nearest line in its cell of the grid), or null. */
function lineOf(feature: string, grid?: ChannelGrid): EmissionLine | null {
	return identifyFeature(feature, grid)[0] ?? null;
}

/**
 * The gas the line a feature is named after points at, or null. Only the line the channel is named
 * after counts (not a line merely blended in its cell).
 * @param feature e.g. "oes_337.1"
 * @param grid the step's channel grid (see channelGrid); without it, lines within 0.5 nm
 */
export function leakGasOf(feature: string, grid?: ChannelGrid): LeakGas | null {
	const l = lineOf(feature, grid);
	return l ? (LEAK_ELEMENTS[l.element] ?? null) : null;
}

const evidenceOf = (c: LeakContributor, base: number) => c.significant === true && typeof c.z === 'number' && c.z - base > LEAK_RISE_Z;

/** Median of finite values (0 for none): the broadband shift a leak line must stand out from. */
function medianOf(values: Iterable<number>): number {
	const s = Float64Array.from([...values].filter(Number.isFinite)).sort();
	if (!s.length) return 0;
	const m = s.length >> 1;
	return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2;
}

/**
 * Decide whether contributors form a leak-like signature.
 *
 * The rule (DOMAIN notes on fault signatures; thresholds are Lockstep's, common practice, no
 * published source):
 * 1. Only Q or a fleet separation can be leak-like: a leak adds species the golden wafers never had,
 *    a direction off the model plane (Q); a T²-led alarm means a known knob moved too far.
 * 2. A contributor is evidence only when it is significant (Q: its reconstruction-based contribution
 *    beyond its control limit, Alcala & Qin 2011; fleet: named under the Benjamini–Hochberg control
 *    of monitoring/fleet.ts) AND has risen more than 3 σ above the broadband shift `baselineZ` (the
 *    median z of every channel: a leak adds light at its own lines, it never removes it, and a
 *    whole spectrum rising together — a gain change, a cleaned window — is not a leak).
 * 3. A channel is a leak line only when the line it is named after (nearest, within its cell of the
 *    channel grid — emission-lines.ts) is a nitrogen feature (N₂ second positive, N₂⁺ first
 *    negative, N I, CN violet — air) or a He I line (backside helium).
 * 4. A gas is named only with at least two DISTINCT lines of it among the evidence (two channels on
 *    one line count once), or, for air, one N₂ band with an oxygen line (O I) risen and significant
 *    too. One channel never makes a signature.
 * 5. For Q, of the first five contributors the risen leak lines must lead Q (the top one is one of
 *    them) or carry at least half of the share.
 *
 * @param evidence 'Q' | 'T²' | 'fleet'
 * @param contributors Q: ranked largest first (the first five are read); fleet: the named features
 * @param grid the step's channel grid; without it, channels are named within 0.5 nm of a line
 * @param baselineZ the broadband shift in the same units as z (default 0)
 * @returns the gases and channels, or null when the signature is not leak-like
 * @throws nothing
 * @example leakSignature('Q', [{ feature: 'oes_337.1', share: 0.5, z: 9, significant: true }, { feature: 'oes_357.7', share: 0.3, z: 7, significant: true }])
 * // → { gases: ['air'], channels: ['oes_337.1', 'oes_357.7'], supporting: [], evidence: 'Q' }
 */
export function leakSignature(evidence: LeakEvidence, contributors: readonly LeakContributor[], grid?: ChannelGrid, baselineZ = 0): LeakSignature | null {
	if (evidence === 'T²') return null;
	const read = evidence === 'Q' ? contributors.slice(0, LEAK_TOP) : contributors;
	const base = Number.isFinite(baselineZ) ? baselineZ : 0;
	const strong = read.filter((c) => evidenceOf(c, base)).map((c) => ({ c, line: lineOf(c.feature, grid) }));
	const hits = strong.filter((h) => h.line && LEAK_ELEMENTS[h.line.element]);
	const oxygen = strong.filter((h) => h.line?.element === 'O');
	const gases: LeakGas[] = [];
	for (const gas of ['air', 'helium'] as const) {
		const mine = hits.filter((h) => LEAK_ELEMENTS[h.line!.element] === gas);
		const distinct = new Set(mine.map((h) => h.line!.wavelengthNm)).size;
		const bandWithOxygen = gas === 'air' && mine.some((h) => N2_BANDS.has(h.line!.element)) && oxygen.length > 0;
		if (distinct >= LEAK_MIN_LINES || bandWithOxygen) gases.push(gas);
	}
	if (!gases.length) return null;
	const used = hits.filter((h) => gases.includes(LEAK_ELEMENTS[h.line!.element]));
	if (evidence === 'Q') {
		const leads = used.some((h) => h.c === read[0]);
		const share = used.reduce((s, h) => s + (h.c.share ?? 0), 0);
		if (!leads && !(share >= LEAK_Q_SHARE)) return null;
	}
	return {
		gases,
		channels: used.map((h) => h.c.feature),
		supporting: gases.includes('air') ? oxygen.map((h) => h.c.feature) : [],
		evidence
	};
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

/**
 * The leak-like signature of a fleet separation: {@link leakSignature} on the features the fleet's
 * false-discovery control named. Accepts stored separations of either form ({z} now, {modifiedZ}
 * before): only named (flagged) features with a known signed statistic count.
 *
 * @param separating the stored separating features of a chamber
 * @param grid the step's channel grid (optional)
 * @param baselineZ the chamber's median statistic over all its features (its broadband shift; the
 *   `medianZ` of compareChambers); default 0
 * @returns the signature, or null
 * @example fleetLeakSignature([{ feature: 'oes_337.1', z: 8, flagged: true }, { feature: 'oes_380.5', z: 6, flagged: true }])?.gases // → ['air']
 */
export function fleetLeakSignature(
	separating: readonly { feature: string; z?: number | null; modifiedZ?: number | null; flagged?: boolean }[],
	grid?: ChannelGrid,
	baselineZ = 0
): LeakSignature | null {
	return leakSignature(
		'fleet',
		separating.filter((f) => f.flagged).map((f) => ({ feature: f.feature, z: f.z ?? f.modifiedZ ?? null, significant: true })),
		grid,
		baselineZ
	);
}
