/**
 * The baseline lifecycle: pick golden wafers, fit a draft, review, approve (the previous active one is
 * retired), and the model cache that scoring reads.
 */
import type { Knex } from 'knex';
import {
	fitBaseline,
	modelFromBlob,
	modelToBlob,
	sampleAutocorrelation,
	scoreBatch,
	EWMAST_M,
	type BaselineModel,
	type ScalingMethod
} from '../monitoring/index.ts';
import { mean, sampleStandardDeviation } from 'simple-statistics';
import { crossValidatedScores } from '../monitoring/cross-validation.ts';
import { db } from './db.ts';
import { getSetting } from './settings.ts';
import { now } from './time.ts';
import { getCatalog, getWaferStepsByIds, getWaferStepsInRange } from './wafer-steps.ts';

export class BaselineError extends Error {
	constructor(
		message: string,
		readonly field?: string
	) {
		super(message);
	}
}

export interface GoldenCandidate {
	id: number;
	waferId: string;
	lotId: string;
	processedAt: number;
	golden: boolean;
	/** Why the wafer is left out by default, or null when it is a fair golden candidate. */
	excluded: string | null;
}

/**
 * Wafer-steps of a chamber × recipe step in a time range, each with the reason it would be left out of
 * a golden set by default: inside an open alarm, or within the seasoning window after a wet clean.
 */
export async function goldenCandidates(
	q: { chamberId: number; recipeStepId: number; from: number; to: number },
	k: Knex = db()
): Promise<GoldenCandidate[]> {
	const policy = await getSetting('baseline_policy', k);
	const rows = await k('wafer_steps')
		.where({ chamber_id: q.chamberId, recipe_step_id: q.recipeStepId })
		.andWhere('processed_at', '>=', q.from)
		.andWhere('processed_at', '<=', q.to)
		.orderBy([{ column: 'processed_at' }, { column: 'id' }])
		.select('id', 'wafer_id', 'lot_id', 'processed_at', 'golden');
	const alarms = await k('alarms as a')
		.leftJoin('wafer_steps as f', 'f.id', 'a.first_wafer_step_id')
		.where({ 'a.chamber_id': q.chamberId, 'a.recipe_step_id': q.recipeStepId, 'a.state': 'open' })
		.select('a.id', 'a.rule', 'f.processed_at as first_at', 'a.last_seen_at');
	const cleans = await k('maintenance_events')
		.where({ chamber_id: q.chamberId, kind: 'wet_clean' })
		.andWhere('at', '<=', q.to)
		.orderBy('at')
		.select('at');
	// Count each wafer's position after the latest wet clean before it (over all its wafers, not just the range).
	const seasoningPos = new Map<number, { n: number; cleanAt: number }>();
	for (const c of cleans) {
		const cleanAt = Number(c.at);
		const after = await k('wafer_steps')
			.where({ chamber_id: q.chamberId, recipe_step_id: q.recipeStepId })
			.andWhere('processed_at', '>', cleanAt)
			.orderBy([{ column: 'processed_at' }, { column: 'id' }])
			.limit(policy.seasoningWafers)
			.select('id');
		after.forEach((r, i) => seasoningPos.set(r.id, { n: i + 1, cleanAt }));
	}
	return rows.map((r) => {
		const at = Number(r.processed_at);
		let excluded: string | null = null;
		const alarm = alarms.find((a) => at >= Number(a.first_at ?? a.last_seen_at) && at <= Number(a.last_seen_at));
		if (alarm) excluded = `inside open alarm #${alarm.id} (${alarm.rule})`;
		const s = seasoningPos.get(r.id);
		if (!excluded && s)
			excluded = `seasoning: wafer ${s.n} of ${policy.seasoningWafers} after the wet clean of ${new Date(s.cleanAt).toISOString().slice(0, 16)}Z`;
		return { id: r.id, waferId: r.wafer_id, lotId: r.lot_id, processedAt: at, golden: Boolean(r.golden), excluded };
	});
}

export interface DraftRequest {
	scope?: 'chamber' | 'fleet';
	chamberId: number | null;
	recipeStepId: number;
	waferStepIds: number[];
	alpha?: number;
	warningAlpha?: number;
	components?: number | 'auto';
	scaling?: ScalingMethod;
	builtBy: string | null;
	note?: string;
}

export interface BaselineSummary {
	n: number;
	k: number;
	p: number;
	componentsRule: string;
	explainedVariance: number[];
	cumulativeExplained: number;
	lowVarianceFeatures: { feature: string; sd: number; floor: number; treatment: string }[];
	/** The golden wafers' own statistics, for the review. */
	golden: { id: number; waferId: string; t2: number; q: number }[];
	qMethod: string;
	route: string;
	/** In-control mean and sd of T²/limit and Q/limit of new wafers (cross-validated golden): the EWMA charts' reference. */
	ewmaReference: EwmaReference | null;
}

/** In-control level of one ratio series for its EWMA chart. */
export interface EwmaStatReference {
	mean: number;
	sd: number;
	/**
	 * Sample autocorrelation r_1 … r_M of the cross-validated golden ratios in processing order
	 * (M = min(25, n − 1): Zhang's horizon, EWMAST_M), from which the chart widens its limits for
	 * correlated wafers. Absent on baselines stored before it was kept (their charts assume
	 * independent wafers), and when the series is constant.
	 */
	acf?: number[];
}

export interface EwmaReference {
	t2: EwmaStatReference;
	q: EwmaStatReference;
	folds: number;
	/** Golden wafers the reference (and its ACF) came from; absent on older baselines. */
	n?: number;
}

/**
 * The EWMA charts' in-control reference: mean, sd and ACF of the golden wafers' cross-validated
 * T²/limit and Q/limit. `rows` must be in processing order (getWaferStepsByIds sorts by
 * processed_at, then id), since the ACF is only meaningful along time.
 */
function ewmaReference(rows: Float64Array[], model: BaselineModel): EwmaReference | null {
	let cv: ReturnType<typeof crossValidatedScores>;
	try {
		cv = crossValidatedScores(rows, model, 5);
	} catch {
		return null; // too few golden wafers to cross-validate: the EWMA rule stays off for this baseline
	}
	const lags = Math.min(EWMAST_M, rows.length - 1);
	const m = (a: Float64Array): EwmaStatReference => {
		const ref: EwmaStatReference = { mean: mean(Array.from(a)), sd: sampleStandardDeviation(Array.from(a)) };
		if (ref.sd > 0) ref.acf = Array.from(sampleAutocorrelation(a, lags));
		return ref;
	};
	return { t2: m(cv.t2Ratio), q: m(cv.qRatio), folds: cv.folds, n: rows.length };
}

/** Fit and store a draft baseline from chosen wafer-steps. Nothing is stored when the fit fails. */
export async function createDraftBaseline(req: DraftRequest, k: Knex = db()): Promise<{ id: number; version: number; summary: BaselineSummary }> {
	const scope = req.scope ?? 'chamber';
	if (req.waferStepIds.length < 10) throw new BaselineError('Pick at least 10 golden wafers.', 'waferStepIds');
	const policy = await getSetting('baseline_policy', k);
	const wafers = await getWaferStepsByIds([...new Set(req.waferStepIds)], k);
	if (wafers.length !== new Set(req.waferStepIds).size) throw new BaselineError('Some chosen wafer-steps do not exist.', 'waferStepIds');
	for (const w of wafers) {
		if (w.recipeStepId !== req.recipeStepId) throw new BaselineError(`Wafer ${w.waferId} belongs to another recipe step.`, 'waferStepIds');
		if (scope === 'chamber' && w.chamberId !== req.chamberId)
			throw new BaselineError(`Wafer ${w.waferId} ran on another chamber.`, 'waferStepIds');
	}
	const versions = new Set(wafers.map((w) => w.featureSetVersion));
	if (versions.size !== 1) throw new BaselineError('The chosen wafers span two feature sets; pick wafers of one.', 'waferStepIds');
	const setVersion = wafers[0].featureSetVersion;
	const catalog = await getCatalog(req.recipeStepId, setVersion, k);
	const featureNames = catalog.map((f) => f.name);
	let model: BaselineModel;
	try {
		model = fitBaseline(
			wafers.map((w) => w.values),
			{
				featureNames,
				alpha: req.alpha ?? policy.alpha,
				warningAlpha: req.warningAlpha ?? policy.warningAlpha,
				components: req.components ?? 'auto',
				scaling: req.scaling ?? 'autoscale'
			}
		);
	} catch (e) {
		throw new BaselineError(`The model could not be fitted: ${e instanceof Error ? e.message : String(e)}`);
	}
	const self = scoreBatch(model, wafers.map((w) => w.values));
	const ev = Array.from(model.explainedVariance);
	const summary: BaselineSummary = {
		n: model.n,
		k: model.k,
		p: model.p,
		componentsRule: model.componentsRule,
		explainedVariance: ev.slice(0, 30),
		cumulativeExplained: ev.slice(0, model.k).reduce((a, b) => a + b, 0),
		lowVarianceFeatures: model.lowVarianceFeatures.map((f) => ({ feature: f.feature, sd: f.sd, floor: f.floor, treatment: f.treatment })),
		golden: wafers.map((w, i) => ({ id: w.id, waferId: w.waferId, t2: self.t2[i], q: self.q[i] })),
		qMethod: model.qMethod,
		route: model.route,
		ewmaReference: ewmaReference(wafers.map((w) => w.values), model)
	};
	const t = now();
	return k.transaction(async (trx) => {
		const prev = await trx('baselines')
			.where({ scope, recipe_step_id: req.recipeStepId })
			.modify((qb) => (req.chamberId === null ? qb.whereNull('chamber_id') : qb.where('chamber_id', req.chamberId)))
			.max({ v: 'version' })
			.first();
		const version = Number(prev?.v ?? 0) + 1;
		const times = wafers.map((w) => w.processedAt);
		const [row] = await trx('baselines')
			.insert({
				scope,
				chamber_id: req.chamberId,
				recipe_step_id: req.recipeStepId,
				version,
				status: 'draft',
				feature_set_version: setVersion,
				alpha: model.alpha,
				warning_alpha: model.warningAlpha,
				k: model.k,
				n: model.n,
				scaling: model.scaling,
				t2_limit: model.limits.t2,
				q_limit: model.limits.q,
				t2_warning_limit: model.limits.t2Warning,
				q_warning_limit: model.limits.qWarning,
				phi_limit: model.limits.phi,
				model: Buffer.from(modelToBlob(model)),
				summary_json: JSON.stringify(summary),
				train_from: Math.min(...times),
				train_to: Math.max(...times),
				built_by: req.builtBy,
				built_at: t,
				note: req.note ?? null
			})
			.returning('id');
		const id = typeof row === 'object' ? row.id : row;
		for (let i = 0; i < wafers.length; i += 400)
			await trx('baseline_training_wafers').insert(wafers.slice(i, i + 400).map((w) => ({ baseline_id: id, wafer_step_id: w.id })));
		return { id, version, summary };
	});
}

/**
 * Approve a draft: it becomes the active baseline of its chamber × recipe step, the previous active
 * one is retired. With the four-eyes policy the approver must differ from the builder. A chamber in
 * requalify leaves that state once every recipe step it has baselines for has one approved since.
 */
export async function approveBaseline(id: number, approverId: string, k: Knex = db()): Promise<{ retired: number | null }> {
	const policy = await getSetting('baseline_policy', k);
	return k.transaction(async (trx) => {
		const b = await trx('baselines').where({ id }).first();
		if (!b) throw new BaselineError('No such baseline.');
		if (b.status !== 'draft') throw new BaselineError(`Baseline v${b.version} is ${b.status}, not a draft.`);
		if (policy.fourEyes && b.built_by === approverId)
			throw new BaselineError('Policy requires an approver other than the engineer who built the baseline.');
		const t = now();
		const scopeQuery = () =>
			trx('baselines')
				.where({ scope: b.scope, recipe_step_id: b.recipe_step_id, status: 'active' })
				.modify((qb) => (b.chamber_id === null ? qb.whereNull('chamber_id') : qb.where('chamber_id', b.chamber_id)));
		const prev = await scopeQuery().first('id');
		if (prev) await trx('baselines').where({ id: prev.id }).update({ status: 'retired', retired_at: t });
		await trx('baselines').where({ id }).update({ status: 'active', approved_by: approverId, approved_at: t });
		if (b.chamber_id !== null) await maybeEndRequalify(trx, b.chamber_id);
		return { retired: prev?.id ?? null };
	});
}

async function maybeEndRequalify(trx: Knex.Transaction, chamberId: number) {
	const ch = await trx('chambers').where({ id: chamberId }).first('requalify_since');
	if (!ch?.requalify_since) return;
	const since = Number(ch.requalify_since);
	const steps = await trx('baselines').where({ scope: 'chamber', chamber_id: chamberId, status: 'active' }).select('approved_at');
	if (steps.length > 0 && steps.every((s) => Number(s.approved_at) >= since))
		await trx('chambers').where({ id: chamberId }).update({ requalify_since: null, requalify_reason: null });
}

/** Discard a draft (drafts only; active and retired baselines are history). */
export async function discardDraft(id: number, k: Knex = db()): Promise<void> {
	await k.transaction(async (trx) => {
		const b = await trx('baselines').where({ id }).first('status');
		if (!b) throw new BaselineError('No such baseline.');
		if (b.status !== 'draft') throw new BaselineError('Only drafts can be discarded.');
		await trx('baseline_training_wafers').where({ baseline_id: id }).delete();
		await trx('baselines').where({ id }).delete();
	});
}

// Baselines never change after they are stored (only their status), so a model is cached by id.
const cache = new Map<number, BaselineModel>();

export async function getModel(baselineId: number, k: Knex = db()): Promise<BaselineModel> {
	const hit = cache.get(baselineId);
	if (hit) return hit;
	const row = await k('baselines').where({ id: baselineId }).first('model');
	if (!row) throw new BaselineError(`No baseline ${baselineId}.`);
	const model = modelFromBlob(new Uint8Array(row.model));
	if (cache.size > 2000) cache.clear();
	cache.set(baselineId, model);
	return model;
}

export interface ActiveBaseline {
	id: number;
	version: number;
	featureSetVersion: number;
	model: BaselineModel;
}

export async function getActiveBaseline(chamberId: number, recipeStepId: number, k: Knex = db()): Promise<ActiveBaseline | null> {
	const b = await k('baselines')
		.where({ scope: 'chamber', chamber_id: chamberId, recipe_step_id: recipeStepId, status: 'active' })
		.first('id', 'version', 'feature_set_version');
	if (!b) return null;
	return { id: b.id, version: b.version, featureSetVersion: b.feature_set_version, model: await getModel(b.id, k) };
}

export async function getActiveFleetBaseline(recipeStepId: number, k: Knex = db()): Promise<ActiveBaseline | null> {
	const b = await k('baselines')
		.where({ scope: 'fleet', recipe_step_id: recipeStepId, status: 'active' })
		.whereNull('chamber_id')
		.first('id', 'version', 'feature_set_version');
	if (!b) return null;
	return { id: b.id, version: b.version, featureSetVersion: b.feature_set_version, model: await getModel(b.id, k) };
}

export { getWaferStepsInRange };
