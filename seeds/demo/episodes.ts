import { EPISODE_CHAMBERS } from './fab';
import type { DemoEpisode } from './types';

const DAY_MS = 86_400_000;
const minute = (ms: number) => Math.floor(ms / 60_000) * 60_000;

/**
 * The five injected episodes, placed relative to the window so they exist for any `end`:
 * the part swap early (so the chamber has a full month of its own golden wafers after it), the O₂ MFC
 * drift over the second half, the He leak in the third week (ended by a PM), the RF match wear over
 * the last week and the air leak in the last days (both still open at the end).
 */
export function buildEpisodes(startMs: number, endMs: number): DemoEpisode[] {
	const c = EPISODE_CHAMBERS;
	return [
		{
			id: `part-swap-${c.partSwap}`,
			chamberCode: c.partSwap,
			kind: 'part_swap_offset',
			start: new Date(minute(startMs + 4.4 * DAY_MS)),
			end: null,
			title: `${c.partSwap} runs apart from the PGE-14 fleet after a focus-ring swap`,
			whatToLookFor:
				'Its own baseline, requalified after the swap, stays quiet; fleet matching shows it apart on a few features: ' +
				'Cl 837.6 low, H 656.3 and 486.1 high and dc_bias_v more negative in main_etch, F 703.7 and 685.6 low in ' +
				'breakthrough, each by about 2–3 fleet σ and stable since the swap.'
		},
		{
			id: `o2-mfc-drift-${c.o2Drift}`,
			chamberCode: c.o2Drift,
			kind: 'o2_mfc_drift',
			start: new Date(minute(endMs - 15 * DAY_MS + 3.2 * 3_600_000)),
			end: null,
			title: `O₂ mass-flow controller on ${c.o2Drift} drifting high`,
			whatToLookFor:
				'O 777.4 and O 844.6 climb slowly against Ar 750.4 in both OXV-22 steps (about +45 % by the end) while ' +
				'o2_flow_sccm still reads its setpoint; throttle_pos_pct opens slightly; F, CO and Ar barely move. ' +
				'The drift carries on through wet cleans: it is the gas delivery, not the walls.'
		},
		{
			id: `he-backside-leak-${c.heLeak}`,
			chamberCode: c.heLeak,
			kind: 'he_backside_leak',
			start: new Date(minute(endMs - 11.7 * DAY_MS)),
			end: new Date(minute(endMs - 7.4 * DAY_MS)),
			title: `Helium backside leak at the chuck seal on ${c.heLeak}`,
			whatToLookFor:
				'He I 587.6, 667.8 and 706.5 appear in both PGE-14 steps and grow while backside_he_sccm rises to hold ' +
				'the backside pressure; a Q alarm with the He channels as top contributors. Ended by the ESC seal PM. ' +
				"Leak-like signature: the site's gas detection, interlocks and safety procedures are authoritative."
		},
		{
			id: `air-leak-${c.airLeak}`,
			chamberCode: c.airLeak,
			kind: 'air_leak',
			start: new Date(minute(endMs - 3.6 * DAY_MS)),
			end: null,
			title: `Air leak at the slit-valve door seal on ${c.airLeak}, getting worse`,
			whatToLookFor:
				'N2 bands at 337.1, 357.7 and 380.5 (and CN 388.3 in this carbon chemistry) appear and grow wafer by ' +
				'wafer, O 777.4 and 844.6 rise; Q alarms with the N2 channels as top contributors. ' +
				"Leak-like signature: the site's gas detection, interlocks and safety procedures are authoritative."
		},
		{
			id: `rf-match-wear-${c.rfMatch}`,
			chamberCode: c.rfMatch,
			kind: 'rf_match_wear',
			start: new Date(minute(endMs - 6.2 * DAY_MS)),
			end: null,
			title: `RF match on ${c.rfMatch} wearing: reflected power creeping up`,
			whatToLookFor:
				'rf_reflected_w creeps up from its usual ≈ 11 W towards ≈ 40 W in both PGE-14 steps while rf_forward_w ' +
				'holds its setpoint; the power delivered to the plasma falls by up to ≈ 6 %, so dc_bias_v shrinks in ' +
				'magnitude (≈ 2–3 %) and nearly every emission line and the continuum drop together by ≈ 3–5 % while the ' +
				'ratios to Ar 750.4 stay put. rf_reflected_w and dc_bias_v lead the contributions. Wet cleans do not ' +
				'help: it is the match, not the walls.'
		}
	];
}

/** Fraction of the episode elapsed at t: 0 before the start, 1 at its end (or the window's end). */
export function episodeProgress(ep: DemoEpisode, tMs: number, windowEndMs: number): number {
	const s = ep.start.getTime();
	const e = ep.end ? ep.end.getTime() : windowEndMs;
	if (tMs < s) return 0;
	return Math.min(1, (tMs - s) / Math.max(1, e - s));
}

/** True while the episode is acting on its chamber (the part-swap offset lasts for good). */
export function episodeActive(ep: DemoEpisode, tMs: number): boolean {
	return tMs >= ep.start.getTime() && (ep.end === null || tMs < ep.end.getTime());
}

/** Actual O₂ flow ÷ setpoint of the drifting MFC: 1 + 0.45 · progress (the reading stays at setpoint). */
export const O2_DRIFT_MAX = 0.45;
export function o2FlowFactor(ep: DemoEpisode, tMs: number, windowEndMs: number): number {
	return 1 + O2_DRIFT_MAX * episodeProgress(ep, tMs, windowEndMs);
}

/** Air inflow of the worsening leak, sccm: 0.25 + 2.75 · progress^1.5 while active. */
export function airLeakSccm(ep: DemoEpisode, tMs: number, windowEndMs: number): number {
	return episodeActive(ep, tMs) ? 0.25 + 2.75 * Math.pow(episodeProgress(ep, tMs, windowEndMs), 1.5) : 0;
}

/** Helium escaping past the chuck seal into the chamber, sccm: 0.4 + 3 · progress while active. */
export function heLeakSccm(ep: DemoEpisode, tMs: number, windowEndMs: number): number {
	return episodeActive(ep, tMs) ? 0.4 + 3 * episodeProgress(ep, tMs, windowEndMs) : 0;
}

/**
 * Extra reflected power of the wearing RF match, as a fraction of forward power: 0.4 % at the start,
 * growing as 0.4 % + 5.6 % · progress^1.4 (≈ 2 W → ≈ 28 W on top of the healthy ≈ 10 W at 450–500 W),
 * 0 outside the episode. A match whose tuning elements wear (a vacuum capacitor losing range, a motor
 * drive slipping) no longer reaches the plasma's impedance, so more of the forward power comes back;
 * with the generator holding forward power, the plasma gets less (demo model, common practice).
 */
export const RF_MATCH_WEAR = { start: 0.004, growth: 0.056, exponent: 1.4 } as const;
export function rfMatchWearFraction(ep: DemoEpisode, tMs: number, windowEndMs: number): number {
	if (!episodeActive(ep, tMs)) return 0;
	return (
		RF_MATCH_WEAR.start +
		RF_MATCH_WEAR.growth * Math.pow(episodeProgress(ep, tMs, windowEndMs), RF_MATCH_WEAR.exponent)
	);
}

/**
 * The part swap's lasting change on the swapped chamber: species line multipliers and the DC bias
 * factor (a new focus ring changes radical consumption at the wafer edge and the sheath).
 */
export const PART_SWAP_OFFSET = { species: { Cl: 0.72, H: 1.2, F: 0.82 }, dcBias: 1.03 } as const;
