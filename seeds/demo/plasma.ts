import { KEY_EMISSION_LINES as EMISSION_LINES } from '../../src/lib/monitoring/emission-lines';
import type { ChamberPersonality } from './chamber';
import { GASES, LINE_STRENGTH, type Gas, type Species, type StepPhysics } from './recipes';
import type { Stream } from './rng';
import { CLOUDING_EXPONENT, CLOUDING_REF_NM, continuumAt, lineShape } from './spectrum';
import type { DemoFeature } from './types';

/** The state of one chamber when a wafer step starts, and what is acting on it. */
export interface WaferConditions {
	/** Wafers since the last wet clean (seasoning state). */
	wafersSinceClean: number;
	rfHoursSinceClean: number;
	lotLoad: number;
	/** Actual ÷ set O₂ flow (a drifting MFC); the reading stays at its setpoint. */
	o2Factor: number;
	airLeakSccm: number;
	heLeakSccm: number;
	/** Extra reflected power of a wearing RF match, fraction of forward power (0: a healthy match). */
	rfMatchWear: number;
	/** Lasting per-species multipliers and DC-bias factor after a part swap (empty: none). */
	swap: { species: Partial<Record<Species, number>>; dcBias: number } | null;
}

/** Seasoning after a wet clean: F starts high, O low, both relax with τ = 8 wafers (demo model). */
export const SEASONING = { F: 0.15, O: -0.12, tauWafers: 8 } as const;
/** Helium's high excitation threshold makes its lines grow faster than linear with electron density. */
const HE_NE_EXPONENT = 1.5;
/**
 * Noise of a step-averaged channel: σ² = I / (g·N) + r² / N, shot noise (variance ∝ intensity) plus
 * read noise, for N ≈ 600 spectra averaged over the step, detector gain g ≈ 5 e⁻/count and read noise
 * r ≈ 10 counts (typical CCD spectrometer figures, from memory).
 */
const SHOT_PER_COUNT = 1 / 3000;
const READ_VAR = 100 / 600;
/** Helium reaching the chamber past a healthy chuck seal, sccm. */
const HE_BASE_SCCM = 0.04;

/** Precomputed, per chamber × step: where each line falls on the channels and the continuum shape. */
export interface StepModel {
	step: StepPhysics;
	features: DemoFeature[];
	nOes: number;
	cloudU: Float64Array;
	continuum: Float64Array;
	lines: { species: Species; counts: number; channels: Int32Array; weights: Float64Array }[];
	sensorIndex: Map<string, number>;
}

export function buildStepModel(step: StepPhysics, features: DemoFeature[], p: ChamberPersonality): StepModel {
	const oes = features.filter((f) => f.kind === 'oes');
	const nOes = oes.length;
	if (features.slice(0, nOes).some((f) => f.kind !== 'oes'))
		throw new Error('demo: OES features must come first');
	const nm = oes.map((f) => f.wavelengthNm as number);
	const cloudU = Float64Array.from(nm, (l) => Math.pow(CLOUDING_REF_NM / l, CLOUDING_EXPONENT));
	const continuum = Float64Array.from(nm, (l) => continuumAt(l, step.continuum, step.cf2Hump));
	// A table line the demo gives no strength (added to the table later) still gets its channel, dark.
	const emitting = EMISSION_LINES.filter((l) => LINE_STRENGTH[l.wavelengthNm.toFixed(1)] !== undefined);
	const lines = emitting.map((line) => {
		const strength = LINE_STRENGTH[line.wavelengthNm.toFixed(1)];
		const ch: number[] = [];
		const w: number[] = [];
		nm.forEach((l, i) => {
			const g = lineShape(l - line.wavelengthNm, p.fwhmNm);
			if (g > 1e-6) (ch.push(i), w.push(g));
		});
		return { ...strength, channels: Int32Array.from(ch), weights: Float64Array.from(w) };
	});
	const sensorIndex = new Map(
		features.map((f, i) => [f.name, i] as [string, number]).filter(([, i]) => i >= nOes)
	);
	return { step, features, nOes, cloudU, continuum, lines, sensorIndex };
}

/**
 * One wafer step's summary values. Lines: peak = strength · source(species) · nₑ · chamber efficiency
 * · seasoning · swap offset, with source the parent gas's mole fraction (or the lot's etch-product
 * load) and nₑ ∝ (delivered power)^0.9 an electron-density proxy (a simple actinometry-style model,
 * common practice). Channel = gain · T(λ) · (lines + continuum · nₑ) + dark, plus shot noise.
 */
export function simulateStep(
	m: StepModel,
	p: ChamberPersonality,
	w: WaferConditions,
	rng: Stream
): Float64Array {
	const st = m.step;
	const out = new Float64Array(m.features.length);
	// Flow through each MFC (its calibration offset and, if drifting, the drift), then what reaches
	// the plasma: the MFC flows plus any air or helium leaking in.
	const mfc = {} as Record<Gas, number>;
	const drift = (g: Gas) => (g === 'o2' ? w.o2Factor : 1);
	for (const g of GASES) mfc[g] = (st.flows[g] ?? 0) * p.mfcBias[g] * drift(g) * (1 + 0.003 * rng.normal());
	const actual = { ...mfc, o2: mfc.o2 + 0.21 * w.airLeakSccm };
	const n2 = 0.78 * w.airLeakSccm;
	const he = st.esc ? HE_BASE_SCCM + w.heLeakSccm : 0;
	const setTotal = GASES.reduce((s, g) => s + (st.flows[g] ?? 0), 0);
	const total = GASES.reduce((s, g) => s + actual[g], 0) + n2 + he;
	const x = (v: number) => v / total;

	const pressure = st.pressureMtorr * (1 + 0.0015 * rng.normal());
	const pRel = pressure / st.pressureMtorr;
	const forward = st.powerW * (1 + 0.002 * rng.normal());
	// A wearing match reflects a growing share on top of the healthy mismatch; its tuning hunts, so the
	// extra jitters with the rest. Written so a healthy match (rfMatchWear = 0) gives the very same value.
	const healthyReflected = forward * st.reflectedFraction * p.reflectedScale * (1 + 6 * (pRel - 1));
	const reflectedJitter = 1 + 0.06 * rng.normal();
	const reflected =
		w.rfMatchWear > 0
			? (healthyReflected + forward * w.rfMatchWear) * reflectedJitter
			: healthyReflected * reflectedJitter;
	// The generator holds forward power: what the match reflects the plasma does not get, so nₑ, every
	// line, the continuum and the DC bias (∝ √delivered) fall together.
	const delivered = forward - reflected;
	const ne = st.neScale * Math.pow(delivered / 1000, 0.9) * Math.pow(pRel, -0.3) * (1 + 0.012 * rng.normal());

	const L = w.lotLoad;
	const fresh = Math.exp(-w.wafersSinceClean / SEASONING.tauWafers);
	const source: Record<Species, number> = {
		Ar: x(actual.ar),
		F: (x(actual.cf4) + 0.6 * x(actual.chf3)) * (1 - 0.3 * L) * (1 + SEASONING.F * fresh),
		O: (x(actual.o2) + st.products.oxideO * (1 + L)) * (1 + SEASONING.O * fresh),
		CO: st.products.co * (1 + L),
		H: 0.5 * x(actual.chf3) + x(actual.hbr) + st.products.h * (1 + L),
		Cl: x(actual.cl2),
		N2: x(n2),
		CN: st.carbon ? 0.5 * x(n2) : 0,
		He: x(he),
		OH: st.products.h * (1 + L) * x(actual.o2) * 4
	};

	const sig = Float64Array.from(m.continuum, (c) => c * ne);
	for (const line of m.lines) {
		const s = source[line.species];
		if (s === 0) continue;
		const neTerm = line.species === 'He' ? Math.pow(ne, HE_NE_EXPONENT) : ne;
		const peak = line.counts * s * neTerm * p.efficiency[line.species] * (w.swap?.species[line.species] ?? 1);
		for (let k = 0; k < line.channels.length; k++) sig[line.channels[k]] += peak * line.weights[k];
	}
	const cloud = p.cloudRate * w.rfHoursSinceClean;
	for (let c = 0; c < m.nOes; c++) {
		const v = p.gain * Math.exp(-cloud * m.cloudU[c]) * sig[c] + p.dark;
		out[c] = v + Math.sqrt(SHOT_PER_COUNT * v + READ_VAR) * rng.normal();
	}

	const put = (name: string, v: number) => {
		const i = m.sensorIndex.get(name);
		if (i !== undefined) out[i] = v;
	};
	put('rf_forward_w', forward);
	put('rf_reflected_w', reflected);
	const bias = st.dcBiasPerRootW * p.dcBiasScale * (w.swap?.dcBias ?? 1);
	put('dc_bias_v', -bias * Math.sqrt(delivered) * Math.pow(pRel, -0.3) * (1 + 0.003 * rng.normal()));
	put('pressure_mtorr', pressure * (1 + 0.0005 * rng.normal()));
	// The throttle opens with the gas load it must pump to hold the pressure setpoint.
	put(
		'throttle_pos_pct',
		(((st.throttlePct + p.throttleOffsetPct) * (total / setTotal)) / pRel) * (1 + 0.004 * rng.normal())
	);
	// Each MFC reads its own flow through its own calibration, so a drifting one still reads setpoint.
	for (const g of GASES)
		if (st.flows[g] !== undefined)
			put(`${g}_flow_sccm`, (mfc[g] / (p.mfcBias[g] * drift(g))) * (1 + 0.0005 * rng.normal()));
	put('chuck_temp_c', st.chuckC + p.chuckOffsetC + 0.0015 * (forward - st.powerW) + 0.08 * rng.normal());
	put('backside_he_sccm', p.backsideHeSccm * (1 + 0.04 * rng.normal()) + w.heLeakSccm);
	return out;
}

/** RF-on time of a step: endpointed steps stretch with the lot's load and jitter around nominal. */
export function rfOnSeconds(st: StepPhysics, lotLoad: number, rng: Stream): number {
	const jitter =
		st.endpointJitterS > 0 ? 0.4 * st.durationS * lotLoad + st.endpointJitterS * rng.normal() : 0;
	return Math.round(Math.max(0.5 * st.durationS, st.durationS + jitter) * 10) / 10;
}
