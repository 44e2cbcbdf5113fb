import { MonitoringInputError } from './errors';
import type { Row } from './scaling';

/** An actinometry ratio: an emission line divided by the argon actinometer line. */
export interface ActinometryRatioSpec {
	/** Name of the derived feature, e.g. "ratio_O777_Ar750". */
	name: string;
	numeratorNm: number;
	denominatorNm: number;
	/** What the ratio tracks. */
	meaning: string;
}

/**
 * The ratios Lockstep derives when the channels exist. With a trace of argon, I_X / I_Ar is
 * proportional to the ground-state density of X when both upper states are excited by electrons of
 * similar energy (Coburn & Chen 1980), so broadband losses such as window clouding cancel.
 * Wavelengths: NIST Atomic Spectra Database (see emission-lines.ts; from memory).
 */
export const ACTINOMETRY_RATIOS: readonly ActinometryRatioSpec[] = [
	{ name: 'ratio_O777_Ar750', numeratorNm: 777.4, denominatorNm: 750.4, meaning: 'atomic oxygen density' },
	{ name: 'ratio_O845_Ar750', numeratorNm: 844.6, denominatorNm: 750.4, meaning: 'atomic oxygen density' },
	{ name: 'ratio_F704_Ar750', numeratorNm: 703.7, denominatorNm: 750.4, meaning: 'atomic fluorine density' }
];

/**
 * The wavelength in nm named by an OES feature ("oes_777.4", "OES 777.42nm", "wl750.4"): the first
 * number of 3–4 digits (with optional decimals) between 150 and 1,200 is taken.
 *
 * Source: common practice (channels named by their centre wavelength in nm).
 *
 * @param featureName the feature's name
 * @returns the wavelength, or null when the name carries none
 * @throws nothing
 * @example parseChannelWavelength('oes_777.4nm') // → 777.4
 */
export function parseChannelWavelength(featureName: string): number | null {
	for (const m of featureName.matchAll(/(\d{3,4}(?:\.\d+)?)/g)) {
		const v = Number(m[1]);
		if (v >= 150 && v <= 1200) return v;
	}
	return null;
}

/** Which feature indices make each available ratio. */
export interface ActinometryPlan {
	ratios: Array<{
		name: string;
		numeratorIndex: number;
		denominatorIndex: number;
		numeratorFeature: string;
		denominatorFeature: string;
	}>;
}

/**
 * Find the channels for the actinometry ratios among a model's features: for each line, the OES
 * channel nearest in wavelength within the tolerance. Ratios whose channels are absent are skipped.
 *
 * Source: Coburn & Chen (1980) "Optical emission spectroscopy of reactive plasmas: a method for
 * correlating emission intensities to reactive particle density", J. Appl. Phys. 51:3134.
 *
 * @param featureNames the features (OES channels named with their wavelength, see {@link parseChannelWavelength})
 * @param toleranceNm match half-width in nm (default 1.5; fab OES resolves 1–2 nm, common practice)
 * @returns the plan (possibly with no ratio)
 * @throws nothing
 * @example planActinometry(['oes_750.5', 'oes_777.3']).ratios[0].name // → 'ratio_O777_Ar750'
 */
export function planActinometry(featureNames: readonly string[], toleranceNm = 1.5): ActinometryPlan {
	const wl = featureNames.map(parseChannelWavelength);
	const nearest = (target: number): number => {
		let best = -1;
		let bestD = Infinity;
		wl.forEach((w, j) => {
			if (w === null) return;
			const d = Math.abs(w - target);
			if (d <= toleranceNm && d < bestD) {
				best = j;
				bestD = d;
			}
		});
		return best;
	};
	const ratios: ActinometryPlan['ratios'] = [];
	for (const r of ACTINOMETRY_RATIOS) {
		const ni = nearest(r.numeratorNm);
		const di = nearest(r.denominatorNm);
		if (ni < 0 || di < 0 || ni === di) continue;
		ratios.push({
			name: r.name,
			numeratorIndex: ni,
			denominatorIndex: di,
			numeratorFeature: featureNames[ni],
			denominatorFeature: featureNames[di]
		});
	}
	return { ratios };
}

/**
 * The actinometry ratios of one row: I(numerator channel) / I(argon channel).
 *
 * Formula: R = I_X / I_Ar.
 * Source: Coburn & Chen (1980) J. Appl. Phys. 51:3134.
 *
 * @param plan from {@link planActinometry}
 * @param row the row's values, in the features' order
 * @returns ratio name → value
 * @throws MonitoringInputError naming the argon feature when its intensity is ≤ 0 or not finite, or
 *   the numerator feature when it is not finite
 * @example actinometryRatios(plan, [2000, 500]) // → { ratio_O777_Ar750: 0.25 }
 */
export function actinometryRatios(plan: ActinometryPlan, row: Row): Record<string, number> {
	const out: Record<string, number> = {};
	for (const r of plan.ratios) {
		const num = row[r.numeratorIndex];
		const den = row[r.denominatorIndex];
		if (!Number.isFinite(num))
			throw new MonitoringInputError(`feature "${r.numeratorFeature}" is ${num}: cannot form ${r.name}`, {
				feature: r.numeratorFeature
			});
		if (!(Number.isFinite(den) && den > 0))
			throw new MonitoringInputError(
				`feature "${r.denominatorFeature}" is ${den}: the argon actinometer line must be positive to form ${r.name}`,
				{ feature: r.denominatorFeature }
			);
		out[r.name] = num / den;
	}
	return out;
}

/**
 * Append the plan's ratios to a row as extra features (names: `plan.ratios[i].name`).
 *
 * Formula and source: as {@link actinometryRatios}.
 *
 * @param plan from {@link planActinometry}
 * @param row the row
 * @returns a new row: the original values then the ratios
 * @throws as {@link actinometryRatios}
 * @example appendActinometry(plan, [2000, 500]) // → Float64Array [2000, 500, 0.25]
 */
export function appendActinometry(plan: ActinometryPlan, row: Row): Float64Array {
	const ratios = actinometryRatios(plan, row);
	const out = new Float64Array(row.length + plan.ratios.length);
	for (let j = 0; j < row.length; j++) out[j] = row[j];
	plan.ratios.forEach((r, i) => (out[row.length + i] = ratios[r.name]));
	return out;
}
