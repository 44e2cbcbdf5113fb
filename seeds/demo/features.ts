import { GASES, RECIPE_PHYSICS, type StepPhysics } from './recipes';
import { oesChannels, oesName } from './spectrum';
import type { DemoFeature } from './types';

/** Tool-sensor columns of a step, in file order (snake_case with a unit suffix). */
export function sensorFeatures(step: StepPhysics): DemoFeature[] {
	const s = (name: string, unit: string): DemoFeature => ({ name, kind: 'sensor', wavelengthNm: null, unit });
	const out = [s('rf_forward_w', 'W'), s('rf_reflected_w', 'W')];
	if (step.esc) out.push(s('dc_bias_v', 'V'));
	out.push(s('pressure_mtorr', 'mTorr'), s('throttle_pos_pct', '%'));
	for (const g of GASES) if (step.flows[g] !== undefined) out.push(s(`${g}_flow_sccm`, 'sccm'));
	out.push(s('chuck_temp_c', '°C'));
	if (step.esc) out.push(s('backside_he_sccm', 'sccm'));
	// RF-on time of the step, so Lockstep can sum RF-hours since the last wet clean.
	out.push(s('rf_on_s', 's'));
	return out;
}

/** Feature catalog of every demo recipe step: all OES channels (ascending nm), then the step's sensors. */
export function featureCatalog(): Record<string, Record<string, DemoFeature[]>> {
	const oes: DemoFeature[] = oesChannels().map((nm) => ({
		name: oesName(nm),
		kind: 'oes',
		wavelengthNm: nm,
		unit: 'counts'
	}));
	const out: Record<string, Record<string, DemoFeature[]>> = {};
	for (const r of RECIPE_PHYSICS) {
		out[r.code] = {};
		for (const st of r.steps) out[r.code][st.name] = [...oes.map((f) => ({ ...f })), ...sensorFeatures(st)];
	}
	return out;
}
