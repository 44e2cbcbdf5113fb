/**
 * The baseline lifecycle: pick golden wafers, fit a draft, review, approve (the previous active one is
 * retired), and the model cache that scoring reads.
 */
import type { Knex } from 'knex';
import { ratioMoments, type RatioMoments } from '../monitoring/drift.ts';
import {
	fitBaselineDetailed,
	goldenSetWarnings,
	phaseOne,
	modelFromBlob,
	modelToBlob,
	scoreBatch,
	EWMAST_M,
	type BaselineModel,
	type ScalingMethod
} from '../monitoring/index.ts';
import { mean, sampleStandardDeviation } from 'simple-statistics';
import { crossValidatedScores } from '../monitoring/cross-validation.ts';
import { gappedAutocorrelation } from '../monitoring/ewma-autocorrelation.ts';
import { db } from './db.ts';
import { getSetting } from './settings.ts';
import { now } from './time.ts';
import { getCatalog, getWaferStepsByIds, getWaferStepsInRange, type StoredWaferStep } from './wafer-steps.ts';

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
	q: { chamberId: number; recipeStepId: number; from: number; to: number; lots?: string[]; waferIds?: string[]; limit?: number },
	k: Knex = db()
): Promise<GoldenCandidate[]> {
	const policy = await getSetting('baseline_policy', k);
	const rows: { id: number; wafer_id: string; lot_id: string; processed_at: number | string; golden: boolean | number }[] = await k('wafer_steps')
		.where({ chamber_id: q.chamberId, recipe_step_id: q.recipeStepId })
		.andWhere('processed_at', '>=', q.from)
		.andWhere('processed_at', '<=', q.to)
		.modify((qb) => {
			// lists are chunked by the caller's size limits (a few thousand at most: golden sets, not history)
			if (q.lots) qb.whereIn('lot_id', q.lots);
			if (q.waferIds) qb.whereIn('wafer_id', q.waferIds);
			if (q.limit) qb.limit(q.limit);
		})
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
			excluded = `seasoning: wafer ${s.n} of ${policy.seasoningWafers} after the wet clean before it`;
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
	/**
	 * In-control mean and sd of T²/limit and Q/limit of new wafers (cross-validated golden), and the
	 * ACF that widens the EWMA limits (consecutive wafers of the training window, or golden): the EWMA charts' reference.
	 */
	ewmaReference: EwmaReference | null;
	/** How the limits were set, in words (the model's limitMethod); absent on older summaries. */
	limitMethod?: string;
	/**
	 * Phase I screening of the golden wafers (phase-one.ts): in-sample T² against the Beta limit and
	 * out-of-sample Q against the other wafers' limit, each at α/2; flagged wafers are proposed for
	 * removal. Null when the set is too small to cross-validate; absent on older summaries.
	 */
	phaseOne?: PhaseOneSummary | null;
	/** What the engineer should read before approving (phase-one.ts goldenSetWarnings); absent on older summaries. */
	warnings?: string[];
}

/** The Phase I part of a draft's summary (a contract: the qualification campaigns read it). */
export interface PhaseOneSummary {
	alpha: number;
	t2Limit: number;
	qLimit: number;
	wafers: { waferStepId: number; waferId: string; t2: number; q: number; flagged: boolean }[];
	flagged: { waferStepId: number; waferId: string; reason: string }[];
	expectedFalseFlags: number;
}

/** In-control level of one ratio series for its EWMA chart. */
export interface EwmaStatReference {
	mean: number;
	sd: number;
	/**
	 * Sample autocorrelation r_1 … r_M of the ratio in processing order (M = min(25, n − 1): Zhang's
	 * horizon, EWMAST_M), from which the chart widens its limits for correlated wafers: from the
	 * consecutive wafers of the training window, or from the golden wafers alone (see
	 * {@link EwmaReference.acfSource}). Absent on baselines stored before it was kept (their charts
	 * assume independent wafers), and when the series is constant.
	 */
	acf?: number[];
	/**
	 * Mean, sd and skewness of the ratio over the same series as the ACF (out of sample: cross-validated
	 * golden ratios and the other in-control wafers of the training window), from which the alarm rules
	 * fit the ratio's in-control law (monitoring/drift.ts shiftedChiSquare). Absent on older baselines
	 * (the rules then use mean and sd alone).
	 */
	moments?: RatioMoments;
}

/** Where a baseline's ACF came from. */
export type AcfSource = 'consecutive' | 'golden';

export interface EwmaReference {
	t2: EwmaStatReference;
	q: EwmaStatReference;
	folds: number;
	/**
	 * Length of the series the ACF came from (observed wafers): the consecutive in-control wafers of
	 * the training window, or the golden wafers (then the golden count, as on every baseline stored
	 * before `acfSource`). Absent on older baselines.
	 */
	n?: number;
	/** 'consecutive' or 'golden' (see {@link CONSECUTIVE_ACF_MIN}); absent on older baselines, whose ACF is golden. */
	acfSource?: AcfSource;
}

/**
 * Fewest in-control consecutive wafers for the ACF to come from them; below it (or for a fleet
 * baseline, which has no one chamber's run) the golden wafers' own ACF is kept. 50 is the length
 * Box, Jenkins & Reinsel (2008, ch. 2; figure from memory) give for a useful ACF estimate. Since
 * every chosen golden wafer belongs to the series, the fallback only happens when the golden
 * wafers are fewer than 50 and almost the whole window.
 */
export const CONSECUTIVE_ACF_MIN = 50;
/** Most wafers the consecutive series keeps: the newest of a longer window (25 lags need far fewer). */
export const CONSECUTIVE_ACF_MAX = 5000;

/** One ratio series over the training window in processing order, NaN where a wafer is left out. */
interface WindowSeries {
	t2: Float64Array;
	q: Float64Array;
}

/**
 * The ratio series of the consecutive wafers of a chamber baseline's training window: every
 * wafer-step of the chamber × recipe step processed from the first to the last chosen golden wafer
 * (the baseline's train_from..train_to), in processing order (processed_at, then id). Chosen golden
 * wafers carry their cross-validated ratios; the other wafers are scored out of sample against the
 * new model. Left out (NaN, kept at their positions so lags stay wafer counts): the wafers the
 * golden candidate list leaves out by default ({@link goldenCandidates}: inside an open alarm, or in
 * the seasoning window after a wet clean) unless the engineer chose them as golden, and wafers of
 * another feature set. What remains is the in-control production run between the golden wafers.
 *
 * Why: the EWMA runs over consecutive wafers, so its variance depends on the ACF at
 * consecutive-wafer lags (Zhang 1998; derivation in ewmastVarianceFactor). Golden wafers are picked
 * sparsely (a couple a lot, then about every 5th wafer), so lag 1 of the golden series is about
 * lag 5 of production, where the lot-to-lot correlation has mostly died away: the golden-only ACF
 * measures ρ at the wrong lags and under-states F (derivation; the sparse picking is common practice).
 */
async function windowSeries(
	chamberId: number,
	recipeStepId: number,
	setVersion: number,
	golden: StoredWaferStep[],
	cv: { t2Ratio: Float64Array; qRatio: Float64Array },
	model: BaselineModel,
	k: Knex
): Promise<WindowSeries> {
	const from = golden[0].processedAt;
	const to = golden[golden.length - 1].processedAt;
	const goldenAt = new Map(golden.map((w, i) => [w.id, i]));
	const all = await goldenCandidates({ chamberId, recipeStepId, from, to }, k);
	const window = all.length > CONSECUTIVE_ACF_MAX ? all.slice(-CONSECUTIVE_ACF_MAX) : all;
	const n = window.length;
	const t2 = new Float64Array(n).fill(NaN);
	const q = new Float64Array(n).fill(NaN);
	const toScore: number[] = [];
	window.forEach((c, i) => {
		const g = goldenAt.get(c.id);
		if (g !== undefined) {
			t2[i] = cv.t2Ratio[g];
			q[i] = cv.qRatio[g];
		} else if (c.excluded === null) toScore.push(i);
	});
	const rows = await getWaferStepsByIds(toScore.map((i) => window[i].id), k);
	const byId = new Map(rows.map((r) => [r.id, r]));
	const keep = toScore.filter((i) => byId.get(window[i].id)?.featureSetVersion === setVersion);
	if (keep.length > 0) {
		const s = scoreBatch(model, keep.map((i) => byId.get(window[i].id)!.values));
		keep.forEach((i, j) => {
			t2[i] = s.t2[j] / model.limits.t2;
			q[i] = s.q[j] / model.limits.q;
		});
	}
	return { t2, q };
}

/**
 * The EWMA charts' in-control reference. Mean and sd: the golden wafers' cross-validated T²/limit
 * and Q/limit (the in-control level, unchanged). ACF, for the variance factor F: from the
 * consecutive in-control wafers of the training window ({@link windowSeries}) when at least
 * {@link CONSECUTIVE_ACF_MIN} of them are observed (`acfSource: 'consecutive'`), else from the
 * golden ratios in processing order (`'golden'`). `golden` must be in processing order
 * (getWaferStepsByIds sorts by processed_at, then id), since the ACF is only meaningful along time.
 * `window` is null for a fleet baseline (no single chamber's run).
 */
async function ewmaReference(
	golden: StoredWaferStep[],
	model: BaselineModel,
	window: { chamberId: number; recipeStepId: number; setVersion: number } | null,
	k: Knex
): Promise<EwmaReference | null> {
	const rows = golden.map((w) => w.values);
	let cv: ReturnType<typeof crossValidatedScores>;
	try {
		cv = crossValidatedScores(rows, model, 5);
	} catch {
		return null; // too few golden wafers to cross-validate: the EWMA rule stays off for this baseline
	}
	const level = (a: Float64Array): EwmaStatReference => ({ mean: mean(Array.from(a)), sd: sampleStandardDeviation(Array.from(a)) });
	const t2 = level(cv.t2Ratio);
	const qRef = level(cv.qRatio);
	let acfSource: AcfSource = 'golden';
	let series: WindowSeries = { t2: cv.t2Ratio, q: cv.qRatio };
	let n = rows.length;
	if (window) {
		const w = await windowSeries(window.chamberId, window.recipeStepId, window.setVersion, golden, cv, model, k);
		const observed = w.t2.reduce((c, v) => c + (Number.isNaN(v) ? 0 : 1), 0);
		if (observed >= CONSECUTIVE_ACF_MIN) {
			acfSource = 'consecutive';
			series = w;
			n = observed;
		}
	}
	const lags = Math.min(EWMAST_M, series.t2.length - 1);
	const acfOf = (a: Float64Array): number[] | undefined => {
		try {
			return Array.from(gappedAutocorrelation(a, lags).acf);
		} catch {
			return undefined; // a constant series: no ACF, the chart assumes independent wafers
		}
	};
	if (t2.sd > 0) t2.acf = acfOf(series.t2);
	if (qRef.sd > 0) qRef.acf = acfOf(series.q);
	const momentsOf = (a: Float64Array): RatioMoments | undefined => {
		try {
			return ratioMoments(a);
		} catch {
			return undefined; // a constant series: the rules fall back to mean and sd
		}
	};
	t2.moments = momentsOf(series.t2);
	qRef.moments = momentsOf(series.q);
	return { t2, q: qRef, folds: cv.folds, n, acfSource };
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
	let cvQ: Float64Array | null = null;
	let folds = 0;
	try {
		const fit = fitBaselineDetailed(
			wafers.map((w) => w.values),
			{
				featureNames,
				alpha: req.alpha ?? policy.alpha,
				warningAlpha: req.warningAlpha ?? policy.warningAlpha,
				components: req.components ?? 'auto',
				scaling: req.scaling ?? 'autoscale',
				// A fleet model pools hundreds of golden wafers of approved chambers (n well above the
				// usual p) and only serves the return-to-production check: the large-sample limits hold
				// there, and the cross-validated refits (seconds per rebuild) would run at every
				// baseline change. Chamber baselines always get the cross-validated limits.
				limits: scope === 'fleet' ? 'theory' : 'cross-validated'
			}
		);
		model = fit.model;
		cvQ = fit.crossValidation?.q ?? null;
		folds = fit.crossValidation?.folds ?? 0;
	} catch (e) {
		throw new BaselineError(`The model could not be fitted: ${e instanceof Error ? e.message : String(e)}`);
	}
	const self = scoreBatch(model, wafers.map((w) => w.values));
	const ev = Array.from(model.explainedVariance);
	const screen = cvQ ? phaseOne(wafers.map((w) => w.values), model, cvQ, { folds }) : null;
	const phase: PhaseOneSummary | null = screen && {
		alpha: screen.alpha,
		t2Limit: screen.t2Limit,
		qLimit: screen.qLimit,
		wafers: screen.wafers.map((r) => ({ waferStepId: wafers[r.index].id, waferId: wafers[r.index].waferId, t2: r.t2, q: r.q, flagged: r.flagged })),
		flagged: screen.wafers.filter((r) => r.flagged).map((r) => ({ waferStepId: wafers[r.index].id, waferId: wafers[r.index].waferId, reason: r.reasons.join('; ') })),
		expectedFalseFlags: screen.expectedFalseFlags
	};
	const warnings = goldenSetWarnings({
		n: model.n,
		k: model.k,
		p: model.p,
		lots: wafers.map((w) => w.lotId),
		times: wafers.map((w) => w.processedAt),
		limitCalibration: model.limitCalibration,
		flagged: phase?.flagged.length,
		expectedFalseFlags: phase?.expectedFalseFlags
	});
	if (!screen) warnings.push('Phase I screening was not possible (too few wafers to leave one out for this k): look at the golden wafers yourself.');
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
		limitMethod: model.limitMethod,
		phaseOne: phase,
		warnings,
		ewmaReference: await ewmaReference(
			wafers,
			model,
			scope === 'chamber' && req.chamberId !== null ? { chamberId: req.chamberId, recipeStepId: req.recipeStepId, setVersion } : null,
			k
		)
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
		// The record of which wafers were golden: the fleet model and every later view read it. Wafers of
		// a retired baseline keep theirs (they were golden then; the baseline history says for which).
		if (b.scope === 'chamber')
			await trx('wafer_steps')
				.whereIn('id', trx('baseline_training_wafers').where({ baseline_id: id }).select('wafer_step_id'))
				.update({ golden: true });
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
