/**
 * The fleet-matching API's answers (GET/POST /api/matching): recipe and step resolved by code and
 * name, the latest run of a step as `{ranAt, chambers: [{chamber, distance, z, flagged, separating}]}`
 * or why there is none, and the outcome of an on-demand run.
 */
import type { Knex } from 'knex';
import { db } from '../db.ts';
import type { FleetRunResult } from '../fleet-matching.ts';
import { identifyFeature } from '../../monitoring/index.ts';
import { fleetSteps, latestRun, stepChannelGrid } from './fleet-view.ts';

export class MatchingRequestError extends Error {}

export interface StepRef {
	id: number;
	recipe: string;
	step: string;
}

/**
 * The recipe steps a request names: both → that step; a recipe alone → its steps; neither → all.
 * @throws MatchingRequestError saying what is wrong (unknown recipe or step, step without recipe)
 */
export async function resolveSteps(recipe: string | null, step: string | null, k: Knex = db()): Promise<StepRef[]> {
	if (step !== null && recipe === null) throw new MatchingRequestError('Name the recipe of the step: ?recipe=CODE&step=NAME.');
	const rows: { id: number; code: string; name: string }[] = await k('recipe_steps as rs')
		.join('recipes as r', 'r.id', 'rs.recipe_id')
		.modify((q) => (recipe !== null ? q.where('r.code', recipe) : q))
		.orderBy([{ column: 'r.code' }, { column: 'rs.position' }])
		.select('rs.id', 'r.code', 'rs.name');
	if (recipe !== null && rows.length === 0) throw new MatchingRequestError(`No recipe "${recipe}".`);
	const out: StepRef[] = rows.map((r) => ({ id: r.id, recipe: r.code, step: r.name }));
	if (step === null) return out;
	const hit = out.filter((s) => s.step === step);
	if (!hit.length) throw new MatchingRequestError(`Recipe "${recipe}" has no step "${step}"; its steps: ${out.map((s) => s.step).join(', ')}.`);
	return hit;
}

const iso = (ms: number | null) => (ms === null ? null : new Date(ms).toISOString());

/** The latest run of a step, or why there is none (never run; or the latest attempt's skip reason). */
export async function matchingAnswer(s: StepRef, k: Knex = db()) {
	const info = (await fleetSteps(k)).find((x) => x.id === s.id)!;
	const run = await latestRun(s.id, k);
	const attempt = info.lastAttempt;
	const grid = await stepChannelGrid(s.id, k);
	const lineOf = (f: string) => {
		const l = identifyFeature(f, grid)[0];
		return l ? `${l.species} ${l.wavelengthNm.toFixed(1)}` : null;
	};
	const why =
		run.runAt === null
			? attempt?.status === 'skipped'
				? `Not run yet: the latest attempt (${iso(attempt.at)}) was skipped: ${attempt.reason}.`
				: 'Fleet matching has never run for this step.'
			: null;
	return {
		recipe: s.recipe,
		step: s.step,
		ranAt: iso(run.runAt),
		...(why ? { reason: why } : {}),
		latestAttempt: attempt ? { at: iso(attempt.at), status: attempt.status, reason: attempt.reason, trigger: attempt.trigger } : null,
		method: {
			z: 'normal score of the chamber’s fleet-adjusted p-value, Φ⁻¹(1 − p̃/2); flagged when z ≥ threshold',
			threshold: run.threshold,
			alpha: run.alpha,
			featureFdr: run.featureFdr,
			distance: 'largest |offset| of the chamber’s window mean over the features, in within-chamber σ'
		},
		fleetModel: {
			id: info.model.fleetBaselineId,
			version: info.model.version,
			builtAt: iso(info.model.builtAt),
			chambers: info.model.chambers,
			goldenWafers: info.model.goldenWafers,
			stale: info.model.stale
		},
		chambers: run.rows.map((r) => ({
			chamber: r.chamberCode,
			distance: r.distance,
			z: r.z,
			adjustedP: r.adjustedP,
			flagged: r.flagged,
			wafers: r.wafers,
			windowFrom: iso(r.windowFrom),
			windowTo: iso(r.windowTo),
			// only the features named under false-discovery control
			separating: r.separating.filter((f) => f.flagged).map((f) => ({ feature: f.feature, line: lineOf(f.feature), offsetSd: f.offsetSd, z: f.z, qValue: f.qValue }))
		}))
	};
}

export function runAnswer(s: StepRef, r: FleetRunResult, at: number) {
	return {
		recipe: s.recipe,
		step: s.step,
		ranAt: r.skipped ? null : new Date(at).toISOString(),
		...(r.skipped ? { skipped: r.skipped } : {}),
		chambers: r.chambers,
		flagged: r.flagged,
		alarmsOpened: r.alarmsOpened,
		fleetModelRebuilt: r.rebuilt
	};
}
