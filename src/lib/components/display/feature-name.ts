/**
 * One name for a feature column on every screen and in every mail: an OES channel becomes the
 * species and line it belongs to ("oes_337.1" → "N₂ 337.1 nm", "oes_777.2" → "O I 777.4 nm"), with
 * chemical subscripts written as subscripts everywhere ("N₂", never "N2"). Tool sensors keep their
 * column name (`rf_reflected_w`): it is the name the tool host writes and engineers search for.
 * The line table and the matching are the engine's (identifyFeature in monitoring/emission-lines.ts).
 * Relative imports with extensions: the mail jobs run this outside Vite.
 */
import { identifyFeature, type ChannelGrid } from '../../monitoring/emission-lines.ts';

const SUB: Record<string, string> = { '0': '₀', '1': '₁', '2': '₂', '3': '₃', '4': '₄', '5': '₅', '6': '₆', '7': '₇', '8': '₈', '9': '₉' };

/**
 * A species or formula with its atom counts as subscripts: "N2" → "N₂", "SF6" → "SF₆", "CO2+" → "CO₂+";
 * ionisation stages written in Roman numerals ("O I", "Ar II") are left as they are.
 */
export function chemical(species: string): string {
	return species.replace(/([A-Za-z)])(\d+)/g, (_, el: string, n: string) => el + [...n].map((d) => SUB[d]).join(''));
}

/** The wavelength an OES column name carries ("oes_777.2" → 777.2), or null for a sensor column. */
export function channelWavelength(feature: string): number | null {
	const m = /^oes[_-]?(\d{3,4}(?:\.\d+)?)$/i.exec(feature.trim());
	return m ? Number(m[1]) : null;
}

/** A channel further than this from its line's centre carries its own wavelength in the label (half a typical 1 nm resolution). */
export const OFF_CENTRE_NM = 0.5;

export interface FeatureName {
	/** what to print: "N₂ 337.1 nm", "OES 512.3 nm" (no listed line within the window), or the sensor's column */
	label: string;
	/** the column as stored, e.g. "oes_337.1" */
	code: string;
	/** the line's note for a tooltip ("N₂ second positive (0,0): air leak"), null when none */
	note: string | null;
	/** true when the label names a species (an OES channel matched to a listed line) */
	identified: boolean;
}

/**
 * The one formatter for a feature column's name (see the module comment). `grid` is the step's channel
 * grid (or a tolerance in nm), so a channel is named only within its own cell (identifyFeature).
 */
export function nameFeature(feature: string, grid?: number | ChannelGrid): FeatureName {
	const nm = channelWavelength(feature);
	if (nm === null) return { label: feature, code: feature, note: null, identified: false };
	const line = identifyFeature(feature, grid)[0];
	if (!line) return { label: `OES ${nm.toFixed(1)} nm`, code: feature, note: null, identified: false };
	// A channel off the line's centre says so, so two channels near one line do not read as the same name.
	const off = Math.abs(nm - line.wavelengthNm) > OFF_CENTRE_NM ? ` (ch. ${nm.toFixed(1)})` : '';
	return { label: `${chemical(line.species)} ${line.wavelengthNm.toFixed(1)} nm${off}`, code: feature, note: chemical(line.note), identified: true };
}

/** Just the label: `featureLabel('oes_337.1')` → "N₂ 337.1 nm". */
export function featureLabel(feature: string, grid?: number | ChannelGrid): string {
	return nameFeature(feature, grid).label;
}
