import { GASES, type Gas, type Species } from './recipes';
import type { Stream } from './rng';

/**
 * What makes one chamber differ from its nominally identical siblings: spectrometer gain and
 * resolution, detector dark level, how fast its window clouds, wall and geometry differences in each
 * species' emission, RF match, sheath, pumping, chuck and MFC calibration offsets.
 */
export interface ChamberPersonality {
	gain: number;
	fwhmNm: number;
	dark: number;
	/** Clouding rate c of T(λ) = exp(−c·h·(λ₀/λ)^m), per RF-hour. */
	cloudRate: number;
	efficiency: Record<Species, number>;
	reflectedScale: number;
	dcBiasScale: number;
	throttleOffsetPct: number;
	chuckOffsetC: number;
	/** Backside-He flow the chuck needs to hold its pressure with a healthy seal, sccm. */
	backsideHeSccm: number;
	/** Actual flow ÷ reading of each MFC (calibration offset the reading cannot show). */
	mfcBias: Record<Gas, number>;
}

const SPECIES: readonly Species[] = ['Ar', 'F', 'O', 'CO', 'H', 'Cl', 'N2', 'CN', 'He', 'OH'];

/** Fleet spread (1 σ) of the personality parameters: a demo choice, typical of matched chambers (from memory). */
export const FLEET_SPREAD = { gain: 0.05, efficiency: 0.03, dcBias: 0.025, mfc: 0.01 } as const;

/**
 * Draw a chamber's personality from its own stream. `typical` keeps every draw (so the stream stays
 * aligned) but sets the chamber at the fleet's centre: used for the chamber whose later part swap must
 * set it apart from the fleet by a known amount.
 */
export function drawPersonality(rng: Stream, typical = false): ChamberPersonality {
	const z = (sd: number, clampSd = 2.5) => {
		const v = Math.max(-clampSd, Math.min(clampSd, rng.normal()));
		return typical ? 0 : v * sd;
	};
	const efficiency = {} as Record<Species, number>;
	for (const s of SPECIES) efficiency[s] = 1 + z(FLEET_SPREAD.efficiency);
	const mfcBias = {} as Record<Gas, number>;
	for (const g of GASES) mfcBias[g] = 1 + z(FLEET_SPREAD.mfc);
	return {
		gain: 1 + z(FLEET_SPREAD.gain),
		fwhmNm: 1.6 + z(0.1),
		dark: 100 + z(6),
		cloudRate: 0.07 * (1 + z(0.2)),
		efficiency,
		reflectedScale: 1 + z(0.15),
		dcBiasScale: 1 + z(FLEET_SPREAD.dcBias),
		throttleOffsetPct: z(1.5),
		chuckOffsetC: z(0.3),
		backsideHeSccm: 3 + z(0.35),
		mfcBias
	};
}
