/**
 * The leak-like rule itself, on contributors a caller already ranked: no model, no scoring and no
 * distribution quantiles, so screens can import it without the engine's numerical code (which the
 * page's Content-Security-Policy would refuse in a browser). leak-signature.ts applies it to a wafer
 * against its baseline and re-exports everything here.
 */
import { channelGrid, identifyFeature, type ChannelGrid, type EmissionLine } from './emission-lines';

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
export function medianOf(values: Iterable<number>): number {
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
