/**
 * The demo's three recipes and the plasma model behind each of their steps.
 *
 * Everything here is invented for the demo (common practice / from memory, not measured): flows,
 * powers and pressures are typical of their process class, the line strengths are chosen so the
 * summary intensities land in a 16-bit spectrometer's range.
 */

/** Gases the demo recipes use (all flows in sccm). `n2` and `he` only ever arrive through leaks. */
export type Gas = 'ar' | 'o2' | 'cf4' | 'chf3' | 'cl2' | 'hbr';
export const GASES: readonly Gas[] = ['ar', 'o2', 'cf4', 'chf3', 'cl2', 'hbr'];

/** Emitting species of the demo spectra; each maps to lines of the emission-line table. */
export type Species = 'Ar' | 'F' | 'O' | 'CO' | 'H' | 'Cl' | 'N2' | 'CN' | 'He' | 'OH';

export interface StepPhysics {
	name: string;
	/** Nominal step length; steps with endpoint detection vary by `endpointJitterS` (1 σ). */
	durationS: number;
	endpointJitterS: number;
	flows: Partial<Record<Gas, number>>;
	powerW: number;
	pressureMtorr: number;
	/** Electron-density proxy at nominal power, relative (source type and coupling). */
	neScale: number;
	chuckC: number;
	/** Electrostatic chuck with backside helium and a biased electrode (etch); false for the strip pedestal. */
	esc: boolean;
	/** DC self-bias magnitude per √W delivered, V (negative bias reported). */
	dcBiasPerRootW: number;
	reflectedFraction: number;
	throttlePct: number;
	/** Etch-product strength per unit lot load: CO from oxide or resist, H from resist. */
	products: { co: number; h: number; oxideO: number };
	/** Carbon present in the gas phase (CN appears with nitrogen). */
	carbon: boolean;
	/** Broadband continuum at 500 nm and the CF₂ band hump (≈ 240–330 nm, from memory), counts. */
	continuum: number;
	cf2Hump: number;
}

export interface RecipePhysics {
	code: string;
	name: string;
	chemistry: string;
	area: string;
	steps: StepPhysics[];
}

const DIELECTRIC: RecipePhysics = {
	code: 'OXV-22',
	name: 'Oxide contact/via etch',
	chemistry: 'CF4 / CHF3 / Ar / O2 (capacitively coupled)',
	area: 'DE',
	steps: [
		{
			name: 'main_etch',
			durationS: 55,
			endpointJitterS: 1.5,
			flows: { cf4: 40, chf3: 30, ar: 150, o2: 8 },
			powerW: 1100,
			pressureMtorr: 55,
			neScale: 1.0,
			chuckC: 20,
			esc: true,
			dcBiasPerRootW: 13.5,
			reflectedFraction: 0.012,
			throttlePct: 31,
			products: { co: 1.0, h: 0, oxideO: 0.015 },
			carbon: true,
			continuum: 260,
			cf2Hump: 900
		},
		{
			name: 'over_etch',
			durationS: 20,
			endpointJitterS: 0,
			flows: { chf3: 40, ar: 200, o2: 4 },
			powerW: 700,
			pressureMtorr: 40,
			neScale: 1.0,
			chuckC: 20,
			esc: true,
			dcBiasPerRootW: 14.5,
			reflectedFraction: 0.015,
			throttlePct: 38,
			products: { co: 0.45, h: 0, oxideO: 0.006 },
			carbon: true,
			continuum: 190,
			cf2Hump: 500
		}
	]
};

const CONDUCTOR: RecipePhysics = {
	code: 'PGE-14',
	name: 'Polysilicon gate etch',
	chemistry: 'CF4 / Ar breakthrough, then Cl2 / HBr / O2 / Ar (inductively coupled)',
	area: 'CE',
	steps: [
		{
			name: 'breakthrough',
			durationS: 10,
			endpointJitterS: 0,
			flows: { cf4: 60, ar: 40 },
			powerW: 450,
			pressureMtorr: 8,
			neScale: 2.1,
			chuckC: 55,
			esc: true,
			dcBiasPerRootW: 9.0,
			reflectedFraction: 0.02,
			throttlePct: 62,
			products: { co: 0.15, h: 0, oxideO: 0.004 },
			carbon: true,
			continuum: 210,
			cf2Hump: 400
		},
		{
			name: 'main_etch',
			durationS: 50,
			endpointJitterS: 2.0,
			flows: { cl2: 80, hbr: 120, o2: 5, ar: 10 },
			powerW: 500,
			pressureMtorr: 12,
			neScale: 2.0,
			chuckC: 55,
			esc: true,
			dcBiasPerRootW: 6.5,
			reflectedFraction: 0.018,
			throttlePct: 47,
			products: { co: 0, h: 0, oxideO: 0 },
			carbon: false,
			continuum: 240,
			cf2Hump: 0
		}
	]
};

const STRIP: RecipePhysics = {
	code: 'PRS-60',
	name: 'Photoresist strip',
	chemistry: 'O2 / CF4 / Ar (inductive source, heated pedestal, no bias)',
	area: 'ST',
	steps: [
		{
			name: 'bulk_strip',
			durationS: 45,
			endpointJitterS: 1.0,
			flows: { o2: 600, cf4: 6, ar: 30 },
			powerW: 1500,
			pressureMtorr: 900,
			neScale: 0.42,
			chuckC: 250,
			esc: false,
			dcBiasPerRootW: 0,
			reflectedFraction: 0.01,
			throttlePct: 22,
			products: { co: 2.2, h: 0.05, oxideO: 0 },
			carbon: true,
			continuum: 320,
			cf2Hump: 0
		},
		{
			name: 'over_strip',
			durationS: 20,
			endpointJitterS: 0,
			flows: { o2: 600, ar: 30 },
			powerW: 1200,
			pressureMtorr: 900,
			neScale: 0.42,
			chuckC: 250,
			esc: false,
			dcBiasPerRootW: 0,
			reflectedFraction: 0.011,
			throttlePct: 22,
			products: { co: 0.35, h: 0.008, oxideO: 0 },
			carbon: true,
			continuum: 280,
			cf2Hump: 0
		}
	]
};

export const RECIPE_PHYSICS: readonly RecipePhysics[] = [DIELECTRIC, CONDUCTOR, STRIP];

export function recipePhysics(code: string): RecipePhysics {
	const r = RECIPE_PHYSICS.find((p) => p.code === code);
	if (!r) throw new Error(`demo: no plasma model for recipe ${code}`);
	return r;
}

export function stepPhysics(recipe: string, step: string): StepPhysics {
	const s = recipePhysics(recipe).steps.find((p) => p.name === step);
	if (!s) throw new Error(`demo: recipe ${recipe} has no step ${step}`);
	return s;
}

/**
 * Emission strength of each table line, counts per unit "source" (mole fraction of the parent gas, or
 * etch-product load) at electron-density proxy 1 and spectrometer gain 1. Relative strengths are a demo
 * choice (from memory of typical etch spectra), not transition probabilities.
 */
export const LINE_STRENGTH: Readonly<Record<string, { species: Species; counts: number }>> = {
	'309.0': { species: 'OH', counts: 5200 },
	'337.1': { species: 'N2', counts: 420000 },
	'357.7': { species: 'N2', counts: 260000 },
	'380.5': { species: 'N2', counts: 120000 },
	'388.3': { species: 'CN', counts: 160000 },
	'483.5': { species: 'CO', counts: 4200 },
	'486.1': { species: 'H', counts: 9000 },
	'587.6': { species: 'He', counts: 160000 },
	'656.3': { species: 'H', counts: 30000 },
	'667.8': { species: 'He', counts: 70000 },
	'685.6': { species: 'F', counts: 32000 },
	'703.7': { species: 'F', counts: 60000 },
	'706.5': { species: 'He', counts: 90000 },
	'750.4': { species: 'Ar', counts: 26000 },
	'777.4': { species: 'O', counts: 90000 },
	'811.5': { species: 'Ar', counts: 32000 },
	'837.6': { species: 'Cl', counts: 14000 },
	'844.6': { species: 'O', counts: 50000 }
};
