/**
 * What a mail says about one alarm beyond its row: the features that drove it, and whether the
 * signature is leak-like (then the mail carries the safety reminder).
 *
 * - A fleet alarm: the features that set the chamber apart from the fleet (stored with the alarm).
 * - A wafer alarm: the top reconstruction-based contributions (Alcala & Qin 2009, Automatica 45:1593)
 *   of its worst wafer to the statistic that is further over its limit (T² or Q).
 * - Leak-like: the engine's one rule (monitoring/leak-signature.ts), the same the alarm screens and
 *   the wafer page use: for a wafer alarm its worst wafer's signature, for a fleet alarm its separating
 *   features.
 */
import type { Knex } from 'knex';
import { contributions, fleetLeakSignature, rankContributions, waferLeakSignature, type LeakGas } from '../../monitoring/index.ts';
import { getModel } from '../baselines.ts';
import { decodeValues } from '../feature-values.ts';

export interface AlarmFacts {
	/** which statistic the features explain */
	basis: 'T²' | 'Q' | 'fleet' | null;
	top: { feature: string; share: number | null }[];
	/** gases of a leak-like signature ('air', 'helium'); empty when it is not leak-like */
	leakGases: LeakGas[];
}

/**
 * The gases of a fleet separation's named features, by the engine's rule (fleetLeakSignature); the
 * digest uses it for flagged chambers. Names alone carry no direction or significance, so they never
 * make a signature.
 */
export function leakGasesOf(separating: readonly (string | { feature: string; z?: number | null; modifiedZ?: number | null; flagged?: boolean })[], medianZ = 0): LeakGas[] {
	const entries = separating.filter((s): s is Exclude<typeof s, string> => typeof s !== 'string');
	return fleetLeakSignature(entries.map((s) => ({ ...s, flagged: s.flagged ?? true })), undefined, medianZ)?.gases ?? [];
}

export const GAS_NAMES: Record<string, string> = { air: 'nitrogen (air)', helium: 'helium' };

export async function alarmFacts(
	a: { rule: string; baselineId: number | null; worstWaferStepId: number | null; detail: Record<string, unknown> },
	k: Knex,
	top = 5
): Promise<AlarmFacts> {
	if (a.rule === 'fleet') {
		const sep = Array.isArray(a.detail.separating) ? (a.detail.separating as unknown[]).map(String) : [];
		const detail = Array.isArray(a.detail.separatingDetail) ? (a.detail.separatingDetail as { feature: string; z?: number }[]) : [];
		return { basis: 'fleet', top: sep.slice(0, top).map((feature) => ({ feature, share: null })), leakGases: leakGasesOf(detail, Number(a.detail.medianZ ?? 0)) };
	}
	const none: AlarmFacts = { basis: null, top: [], leakGases: [] };
	if (a.worstWaferStepId === null || a.baselineId === null) return none;
	const score = await k('scores').where({ wafer_step_id: a.worstWaferStepId, baseline_id: a.baselineId }).first('t2_ratio', 'q_ratio');
	const w = await k('wafer_steps').where({ id: a.worstWaferStepId }).first('feature_values');
	if (!score || !w) return none;
	try {
		const model = await getModel(a.baselineId, k);
		const values = decodeValues(w.feature_values);
		if (values.length !== model.p) return none;
		const qLeads = Number(score.q_ratio) >= Number(score.t2_ratio);
		const c = contributions(model, values, 'rbc');
		// with one component T² contributions say nothing (all equal T²): the mail lists Q's instead
		const ranked = rankContributions(qLeads || !c.t2 ? c.q : c.t2, top);
		return { basis: qLeads || !c.t2 ? 'Q' : 'T²', top: ranked.map((r) => ({ feature: r.feature, share: r.share })), leakGases: waferLeakSignature(model, values)?.gases ?? [] };
	} catch {
		return none; // an unreadable model: the mail goes without the features rather than not at all
	}
}
