/**
 * Read model of the fleet matching screen: per recipe step, the latest run (chambers ranked by their
 * standardized statistic z, separating features named under false-discovery control), whether it has
 * never run or why the latest attempt was skipped, the fleet model's state (built from which approved
 * baselines, stale or not), recent window means of the key emission lines per chamber, and the
 * "return to production" check of one chamber after maintenance. The matching itself runs in
 * fleet-matching.ts (hourly job, "run now", or POST /api/matching).
 */
import type { Knex } from 'knex';
import { channelGrid, FLEET_DEFAULTS, parseChannelWavelength, scoreBatch, type SeparatingFeature } from '../../monitoring/index.ts';
import { getActiveBaseline, getActiveFleetBaseline } from '../baselines.ts';
import { db } from '../db.ts';
import { decodeValues } from '../feature-values.ts';
import { fleetModelState, type FleetModelState } from '../fleet-matching.ts';
import { getSetting } from '../settings.ts';

export interface FleetAttempt {
	at: number;
	status: 'ran' | 'skipped';
	reason: string | null;
	trigger: string;
}

export interface FleetStep {
	id: number;
	recipeCode: string;
	stepName: string;
	fleetModelId: number | null;
	fleetModelVersion: number | null;
	model: FleetModelState;
	/** The latest completed run, or null: never run. */
	lastRunAt: number | null;
	/** The latest attempt, run or skipped (null: never attempted). */
	lastAttempt: FleetAttempt | null;
	flagged: number;
}

async function latestAttempt(recipeStepId: number, k: Knex): Promise<FleetAttempt | null> {
	const a = await k('fleet_runs').where({ recipe_step_id: recipeStepId }).orderBy([{ column: 'run_at', order: 'desc' }, { column: 'id', order: 'desc' }]).first('run_at', 'status', 'reason', 'trigger');
	return a ? { at: Number(a.run_at), status: a.status, reason: a.reason, trigger: a.trigger } : null;
}

export async function fleetSteps(k: Knex = db()): Promise<FleetStep[]> {
	const steps = await k('recipe_steps as rs').join('recipes as r', 'r.id', 'rs.recipe_id').orderBy([{ column: 'r.code' }, { column: 'rs.position' }]).select('rs.id', 'r.code', 'rs.name');
	const runs = await k('fleet_matches').groupBy('recipe_step_id').select('recipe_step_id', k.raw('max(run_at) as at'));
	const out: FleetStep[] = [];
	for (const s of steps) {
		const model = await fleetModelState(s.id, k);
		const run = runs.find((x) => x.recipe_step_id === s.id);
		const at = run ? Number(run.at) : null;
		const flagged = at === null ? 0 : Number((await k('fleet_matches').where({ recipe_step_id: s.id, run_at: at, flagged: true }).count({ n: '*' }).first())?.n ?? 0);
		// Runs from before attempts were recorded count as attempts too.
		const attempt = (await latestAttempt(s.id, k)) ?? (at !== null ? { at, status: 'ran' as const, reason: null, trigger: 'schedule' } : null);
		out.push({ id: s.id, recipeCode: s.code, stepName: s.name, fleetModelId: model.fleetBaselineId, fleetModelVersion: model.version, model, lastRunAt: at, lastAttempt: attempt, flagged });
	}
	return out;
}

/** Whether fleet matching has run for a set of steps, for the landing page (never reassure wrongly). */
export interface FleetRunSummary {
	/** recipe steps considered */
	steps: number;
	/** steps with at least one completed run */
	matched: number;
	/** the latest completed run over those steps, or null: never run */
	lastRunAt: number | null;
	/** steps whose latest attempt was skipped, with the reason */
	skipped: { recipeStepId: number; reason: string }[];
}

export async function fleetRunSummary(stepIds: number[] | null, k: Knex = db()): Promise<FleetRunSummary> {
	const ids = stepIds ?? ((await k('recipe_steps').pluck('id')) as number[]);
	if (!ids.length) return { steps: 0, matched: 0, lastRunAt: null, skipped: [] };
	const ran = await k('fleet_matches').whereIn('recipe_step_id', ids).groupBy('recipe_step_id').select('recipe_step_id', k.raw('max(run_at) as at'));
	const skipped: FleetRunSummary['skipped'] = [];
	for (const id of ids) {
		const a = await latestAttempt(id, k);
		if (a?.status === 'skipped') skipped.push({ recipeStepId: id, reason: a.reason ?? 'skipped' });
	}
	const last = ran.reduce((m: number | null, r) => Math.max(m ?? 0, Number(r.at)), null);
	return { steps: ids.length, matched: ran.length, lastRunAt: last, skipped };
}

export interface MatchRow {
	chamberId: number;
	chamberCode: string;
	areaName: string;
	requalify: boolean;
	wafers: number;
	windowFrom: number;
	windowTo: number;
	/** Largest |offset| over the features, in within-chamber σ. */
	distance: number;
	/** Standardized statistic (monitoring/fleet.ts): normal score of the fleet-adjusted p-value. */
	z: number;
	/** Fleet-adjusted p-value, or null for runs stored before it was recorded. */
	adjustedP: number | null;
	/** The chamber's median statistic over its features (broadband shift), 0 when not recorded. */
	medianZ: number;
	flagged: boolean;
	separating: SeparatingFeature[];
}

/** Runs stored before the current method kept `modifiedZ` per feature; read either. */
function readSeparating(json: string): SeparatingFeature[] {
	try {
		const list = JSON.parse(json) as (Partial<SeparatingFeature> & { feature: string; modifiedZ?: number })[];
		return list.map((f) => ({
			feature: f.feature,
			offsetSd: f.offsetSd ?? 0,
			z: f.z ?? f.modifiedZ ?? 0,
			pValue: f.pValue ?? Number.NaN,
			qValue: f.qValue ?? Number.NaN,
			flagged: Boolean(f.flagged)
		}));
	} catch {
		return [];
	}
}

export async function latestRun(recipeStepId: number, k: Knex = db()): Promise<{ runAt: number | null; threshold: number; alpha: number; featureFdr: number; rows: MatchRow[] }> {
	const empty = { runAt: null, threshold: 2.576, alpha: FLEET_DEFAULTS.alpha, featureFdr: FLEET_DEFAULTS.featureFdr, rows: [] };
	const last = await k('fleet_matches').where({ recipe_step_id: recipeStepId }).max({ at: 'run_at' }).first();
	if (!last?.at) return empty;
	const runAt = Number(last.at);
	const rows = await k('fleet_matches as f')
		.join('chambers as c', 'c.id', 'f.chamber_id')
		.join('tools as t', 't.id', 'c.tool_id')
		.join('areas as ar', 'ar.id', 't.area_id')
		.where({ 'f.recipe_step_id': recipeStepId, 'f.run_at': runAt })
		.orderBy('f.modified_z', 'desc')
		.select('f.*', 'c.code', 'ar.name as area_name', 'c.requalify_since');
	const run = await k('fleet_runs').where({ recipe_step_id: recipeStepId, run_at: runAt, status: 'ran' }).first('alpha', 'threshold');
	return {
		runAt,
		threshold: Number(run?.threshold ?? rows[0]?.threshold ?? empty.threshold),
		alpha: Number(run?.alpha ?? empty.alpha),
		featureFdr: FLEET_DEFAULTS.featureFdr,
		rows: rows.map((r) => ({
			chamberId: r.chamber_id,
			chamberCode: r.code,
			areaName: r.area_name,
			requalify: r.requalify_since !== null,
			wafers: r.wafers,
			windowFrom: Number(r.window_from),
			windowTo: Number(r.window_to),
			distance: r.distance,
			// runs stored before the finite cap could hold an infinite z
			z: Number.isFinite(r.modified_z) ? r.modified_z : 37.5,
			adjustedP: r.p_value ?? null,
			medianZ: Number(r.median_z ?? 0),
			flagged: Boolean(r.flagged),
			separating: readSeparating(r.separating_json)
		}))
	};
}

/** The OES channel grid of a step's current feature set, to name channels after lines (emission-lines.ts). */
export async function stepChannelGrid(recipeStepId: number, k: Knex = db()): Promise<number[]> {
	const step = await k('recipe_steps').where({ id: recipeStepId }).first('feature_set_version');
	if (!step) return [];
	const rows = await k('features').where({ recipe_step_id: recipeStepId, set_version: step.feature_set_version, kind: 'oes' }).select('name', 'wavelength_nm');
	return channelGrid(rows.map((r) => r.wavelength_nm ?? r.name));
}

/** Lines an etch engineer reads first: radicals, actinometer, and the leak and water tracers. */
export const KEY_LINES = [
	{ label: 'O 777.4', nm: 777.4 },
	{ label: 'F 703.7', nm: 703.7 },
	{ label: 'Ar 750.4', nm: 750.4 },
	{ label: 'N₂ 337.1', nm: 337.1 },
	{ label: 'He 587.6', nm: 587.6 },
	{ label: 'H 656.3', nm: 656.3 }
] as const;

export interface KeyLineMeans {
	lines: { label: string; feature: string; channelNm: number }[];
	chambers: { code: string; flagged: boolean; wafers: number; means: (number | null)[] }[];
}

/**
 * Mean intensity of the key lines over each chamber's last `window` wafers of a step: the channel
 * nearest each line (within 2 nm, a 1–2 nm resolution spectrometer — DOMAIN, memory).
 */
export async function keyLineMeans(recipeStepId: number, flagged: Set<string>, k: Knex = db()): Promise<KeyLineMeans> {
	const policy = await getSetting('alarm_policy', k);
	const step = await k('recipe_steps').where({ id: recipeStepId }).first('feature_set_version');
	if (!step) return { lines: [], chambers: [] };
	const catalog = await k('features').where({ recipe_step_id: recipeStepId, set_version: step.feature_set_version, kind: 'oes' }).select('position', 'name', 'wavelength_nm');
	const lines: (KeyLineMeans['lines'][number] & { position: number })[] = [];
	for (const l of KEY_LINES) {
		let best: { position: number; name: string; nm: number } | null = null;
		for (const f of catalog) {
			const nm = f.wavelength_nm ?? parseChannelWavelength(f.name);
			if (nm === null || Math.abs(nm - l.nm) > 2) continue;
			if (!best || Math.abs(nm - l.nm) < Math.abs(best.nm - l.nm)) best = { position: f.position, name: f.name, nm };
		}
		if (best) lines.push({ label: l.label, feature: best.name, channelNm: best.nm, position: best.position });
	}
	const chambers = await k('wafer_steps as w').join('chambers as c', 'c.id', 'w.chamber_id').where('w.recipe_step_id', recipeStepId).distinct('c.id', 'c.code').orderBy('c.code');
	const out: KeyLineMeans['chambers'] = [];
	for (const c of chambers) {
		const rows = await k('wafer_steps')
			.where({ chamber_id: c.id, recipe_step_id: recipeStepId, feature_set_version: step.feature_set_version })
			.orderBy([{ column: 'processed_at', order: 'desc' }, { column: 'id', order: 'desc' }])
			.limit(policy.fleetWindow)
			.select('feature_values');
		const vecs = rows.map((r) => decodeValues(r.feature_values));
		out.push({
			code: c.code,
			flagged: flagged.has(c.code),
			wafers: vecs.length,
			means: lines.map((l) => (vecs.length ? vecs.reduce((s, v) => s + v[l.position], 0) / vecs.length : null))
		});
	}
	return { lines: lines.map(({ label, feature, channelNm }) => ({ label, feature, channelNm })), chambers: out };
}

export interface ReturnCheck {
	chamberCode: string;
	since: number | null;
	sinceWhat: string;
	wafers: number;
	verdict: 'pass' | 'attention';
	reasons: { ok: boolean; text: string }[];
}

/**
 * "Return to production" check of a chamber after maintenance, for one recipe step: its wafers since
 * the last maintenance event against the fleet model and against its own active baseline. A
 * recommendation only; the thresholds are Lockstep's defaults (common practice, not a standard):
 * at least 10 wafers, its own baseline approved after the maintenance, no more wafers above the own
 * limits than twice what α allows (at least 1), fewer than 10 % of wafers beyond the fleet limits,
 * and not flagged by the latest fleet matching run.
 */
export async function returnToProduction(chamberCode: string, recipeStepId: number, k: Knex = db()): Promise<ReturnCheck | null> {
	const ch = await k('chambers').where({ code: chamberCode }).first('id', 'code', 'requalify_since');
	if (!ch) return null;
	const ev = await k('maintenance_events').where({ chamber_id: ch.id }).orderBy('at', 'desc').first('at', 'kind');
	const since = ev ? Number(ev.at) : null;
	const reasons: ReturnCheck['reasons'] = [];
	const wafers = await k('wafer_steps')
		.where({ chamber_id: ch.id, recipe_step_id: recipeStepId })
		.andWhere('processed_at', '>', since ?? 0)
		.orderBy([{ column: 'processed_at' }, { column: 'id' }])
		.limit(500)
		.select('id', 'feature_set_version', 'feature_values');
	const n = wafers.length;
	reasons.push({ ok: n >= 10, text: n >= 10 ? `${n} wafers since the maintenance to judge from.` : `Only ${n} wafer${n === 1 ? '' : 's'} since the maintenance; run at least 10 before judging.` });

	const own = await getActiveBaseline(ch.id, recipeStepId, k);
	const ownRow = own ? await k('baselines').where({ id: own.id }).first('approved_at', 'version') : null;
	if (!own) reasons.push({ ok: false, text: 'No active baseline of its own for this step.' });
	else {
		const fresh = since === null || Number(ownRow?.approved_at ?? 0) >= since;
		reasons.push({ ok: fresh, text: fresh ? `Own baseline v${ownRow?.version} approved after the maintenance.` : `Own baseline v${ownRow?.version} predates the maintenance: requalify it (new golden wafers after seasoning).` });
		const fits = wafers.filter((w) => w.feature_set_version === own.featureSetVersion);
		if (fits.length) {
			const s = scoreBatch(own.model, fits.map((w) => decodeValues(w.feature_values)));
			const over = fits.filter((_, i) => s.t2[i] > own.model.limits.t2 || s.q[i] > own.model.limits.q).length;
			// Two statistics at α each: about 2αn false alarms expected; allow twice that, at least 1.
			const expected = 2 * own.model.alpha * fits.length;
			const allowed = Math.max(1, Math.ceil(2 * expected));
			reasons.push({
				ok: over <= allowed,
				text: `${over} of ${fits.length} wafers beyond its own T² or Q limit (${allowed} allowed: twice the ${expected.toFixed(1)} false alarms expected at α = ${own.model.alpha}).`
			});
		}
	}

	const fleet = await getActiveFleetBaseline(recipeStepId, k);
	if (!fleet) reasons.push({ ok: false, text: 'No fleet model for this step; the chamber cannot be compared with its fleet.' });
	else {
		const fits = wafers.filter((w) => w.feature_set_version === fleet.featureSetVersion);
		if (fits.length) {
			const s = scoreBatch(fleet.model, fits.map((w) => decodeValues(w.feature_values)));
			const over = fits.filter((_, i) => s.t2[i] > fleet.model.limits.t2 || s.q[i] > fleet.model.limits.q).length;
			reasons.push({ ok: over < 0.1 * fits.length, text: `${over} of ${fits.length} wafers beyond the fleet model's limits (under 10 % passes).` });
		}
		const lastMatch = await k('fleet_matches').where({ chamber_id: ch.id, recipe_step_id: recipeStepId }).orderBy('run_at', 'desc').first('modified_z', 'flagged', 'run_at', 'window_from', 'threshold');
		if (lastMatch) {
			const current = since === null || Number(lastMatch.window_from) >= since;
			reasons.push({
				ok: !lastMatch.flagged && current,
				text: lastMatch.flagged
					? `Apart from the fleet in the latest matching run (z ${lastMatch.modified_z.toFixed(1)} ≥ ${Number(lastMatch.threshold ?? 2.576).toFixed(2)}).`
					: current
						? `In family with the fleet in the latest matching run (z ${lastMatch.modified_z.toFixed(1)}).`
						: 'The latest matching run still includes wafers from before the maintenance; run matching again later.'
			});
		} else reasons.push({ ok: false, text: 'Not yet compared with the fleet; run matching.' });
	}
	return {
		chamberCode: ch.code,
		since,
		sinceWhat: ev ? ev.kind : 'no maintenance logged',
		wafers: n,
		verdict: reasons.every((r) => r.ok) ? 'pass' : 'attention',
		reasons
	};
}
