/**
 * Scoring on arrival: the ingest pipeline calls `scoreWaferSteps` inside the transaction that stores
 * the wafer-steps, so a wafer-step is never stored without its scoring state.
 *
 * A wafer-step whose chamber × recipe step has no active baseline (or whose feature set differs from
 * the baseline's) is marked `no_baseline` and shown as such; otherwise it is scored (T², Q, φ against
 * the baseline's limits), its hourly rollup updated and the wafer alarm rules run.
 */
import type { Knex } from 'knex';
import { contributions, rankContributions, scoreBatch, stateRatio, type BaselineModel } from '../monitoring/index.ts';
import { shiftedChiSquare, type ShiftedChiSquare } from '../monitoring/drift.ts';
import { chiSquareUpper } from '../monitoring/quantiles.ts';
import { designRules, type RuleBaseline } from '../monitoring/alarm-rules.ts';
import { raiseOrExtendAll, evaluateRules, quietPoints, settleEpisodes, type AlarmRule, type ScoredPoint, type Violation } from './alarms.ts';
import { getModel, type EwmaReference } from './baselines.ts';
import { decodeValues } from './feature-values.ts';
import { getSetting } from './settings.ts';
import { now } from './time.ts';

export interface NewWaferStep {
	id: number;
	chamberId: number;
	recipeStepId: number;
	processedAt: number;
	featureSetVersion: number;
	values: Float64Array;
}

export interface ScoringResult {
	scored: number;
	noBaseline: number;
	/** ids of alarms opened (not merely extended) by these wafer-steps */
	alarmsOpened: number[];
}

const HOUR = 3_600_000;
const HISTORY = 50; // EWMA memory: (1 − 0.2)^50 ≈ 1e-5

export async function scoreWaferSteps(
	trx: Knex.Transaction | Knex,
	rows: NewWaferStep[],
	opts: { raiseAlarms?: boolean } = {}
): Promise<ScoringResult> {
	const result: ScoringResult = { scored: 0, noBaseline: 0, alarmsOpened: [] };
	if (rows.length === 0) return result;
	const policy = await getSetting('alarm_policy', trx);
	const groups = new Map<string, NewWaferStep[]>();
	for (const r of rows) {
		const key = `${r.chamberId}:${r.recipeStepId}`;
		const g = groups.get(key);
		if (g) g.push(r);
		else groups.set(key, [r]);
	}
	const unscored: number[] = [];
	for (const group of groups.values()) {
		group.sort((a, b) => a.processedAt - b.processedAt || a.id - b.id);
		const { chamberId, recipeStepId } = group[0];
		const b = await trx('baselines')
			.where({ scope: 'chamber', chamber_id: chamberId, recipe_step_id: recipeStepId, status: 'active' })
			.first('id', 'feature_set_version', 'summary_json');
		const fits = b ? group.filter((r) => r.featureSetVersion === b.feature_set_version) : [];
		for (const r of group) if (!fits.includes(r)) unscored.push(r.id);
		if (!b || fits.length === 0) continue;
		const opened = await scoreGroup(trx, b, fits, policy, opts.raiseAlarms ?? true);
		result.scored += fits.length;
		result.alarmsOpened.push(...opened);
	}
	for (let i = 0; i < unscored.length; i += 500)
		await trx('wafer_steps').whereIn('id', unscored.slice(i, i + 500)).update({ scoring_state: 'no_baseline' });
	result.noBaseline = unscored.length;
	return result;
}

async function scoreGroup(
	trx: Knex.Transaction | Knex,
	b: { id: number; summary_json: string },
	rows: NewWaferStep[],
	policy: Awaited<ReturnType<typeof getSetting<'alarm_policy'>>>,
	raiseAlarms: boolean
): Promise<number[]> {
	const model = await getModel(b.id, trx);
	const seasoning = await seasoningWafers(trx, rows);
	const s = scoreBatch(model, rows.map((r) => r.values));
	const { chamberId, recipeStepId } = rows[0];
	const t = now();
	const points: ScoredPoint[] = rows.map((r, i) => {
		const t2Ratio = s.t2[i] / model.limits.t2;
		const qRatio = s.q[i] / model.limits.q;
		return {
			waferStepId: r.id,
			processedAt: r.processedAt,
			t2: s.t2[i],
			q: s.q[i],
			t2Ratio,
			qRatio,
			// The wafer's combined state (Bonferroni α/2 per statistic on calibrated models, stateRatio),
			// so a stored "beyond limit" happens to an in-control wafer with probability α, not 2α.
			worstRatio: model.limits.t2State !== undefined && model.limits.qState !== undefined ? stateRatio(model, s.t2[i], s.q[i], 0) : Math.max(t2Ratio, qRatio),
			seasoning: seasoning.has(r.id)
		};
	});
	const scoreRows = points.map((p, i) => ({
		wafer_step_id: p.waferStepId,
		baseline_id: b.id,
		chamber_id: chamberId,
		recipe_step_id: recipeStepId,
		processed_at: p.processedAt,
		t2: p.t2,
		q: p.q,
		t2_limit: model.limits.t2,
		q_limit: model.limits.q,
		t2_ratio: p.t2Ratio,
		q_ratio: p.qRatio,
		phi_ratio: s.phi[i] / model.limits.phi,
		worst_ratio: p.worstRatio,
		seasoning: p.seasoning ?? false,
		scored_at: t
	}));
	// History under this baseline, before these wafers, for the run and EWMA rules.
	const historyQuery = trx('scores').where({ baseline_id: b.id, chamber_id: chamberId, recipe_step_id: recipeStepId });
	if (policy.holdDuringSeasoning) historyQuery.andWhere('seasoning', false);
	const history = (
		await historyQuery
			.andWhere('processed_at', '<', points[0].processedAt)
			.orderBy('processed_at', 'desc')
			.limit(HISTORY)
			.select('wafer_step_id', 'processed_at', 't2', 'q', 't2_ratio', 'q_ratio', 'worst_ratio')
	)
		.reverse()
		.map((h) => ({
			waferStepId: h.wafer_step_id,
			processedAt: Number(h.processed_at),
			t2: h.t2,
			q: h.q,
			t2Ratio: h.t2_ratio,
			qRatio: h.q_ratio,
			worstRatio: h.worst_ratio
		}));
	const ids = rows.map((r) => r.id);
	const rescoring = await hasScores(trx, ids);
	for (let i = 0; i < ids.length; i += 500) {
		const chunk = ids.slice(i, i + 500);
		if (rescoring) await trx('scores').whereIn('wafer_step_id', chunk).update({ current: false });
		await trx('wafer_steps').whereIn('id', chunk).update({ scoring_state: 'scored' });
	}
	for (let i = 0; i < scoreRows.length; i += 200)
		await trx('scores').insert(scoreRows.slice(i, i + 200)).onConflict(['wafer_step_id', 'baseline_id']).merge(['current', 't2', 'q', 't2_ratio', 'q_ratio', 'phi_ratio', 'worst_ratio', 'seasoning', 'scored_at']);
	if (rescoring) await rebuildRollups(trx, chamberId, recipeStepId, points);
	else await updateRollups(trx, chamberId, recipeStepId, points);
	if (!raiseAlarms) return [];

	const summary = JSON.parse(b.summary_json) as { ewmaReference?: EwmaReference | null };
	const ruleBaseline = ruleBaselineOf(model, summary.ewmaReference ?? null);
	const opened: number[] = [];
	const judged = policy.holdDuringSeasoning ? points.filter((p) => !seasoning.has(p.waferStepId)) : points;
	const violations = evaluateRules(history, judged, ruleBaseline, policy, designRules(policy));
	const byRule = new Map<AlarmRule, Violation[]>();
	const valuesOf = new Map(rows.map((r) => [r.id, r.values]));
	for (const v of violations) {
		v.leading = leadingContributors(model, valuesOf.get(v.point.waferStepId)!, v.point);
		const list = byRule.get(v.rule);
		if (list) list.push(v);
		else byRule.set(v.rule, [v]);
	}
	for (const [rule, vs] of byRule) {
		const r = await raiseOrExtendAll(trx, { chamberId, recipeStepId, baselineId: b.id, rule }, vs, policy);
		if (r) opened.push(...r.openedIds);
	}
	const quiet = quietPoints(judged, violations);
	await settleEpisodes(trx, { chamberId, recipeStepId, clearAfter: policy.clearAfter }, judged.map((p, i) => ({ processedAt: p.processedAt, quiet: quiet[i] })));
	return opened;
}

/**
 * What the alarm rules need of a baseline: each ratio's in-control law (a shifted χ² fitted to the
 * out-of-sample moments the baseline kept, {@link shiftedChiSquare}; a baseline with mean and sd only
 * gets the two-moment fit; one with no reference, a χ² with k (T²) or 2 (Q) degrees of freedom whose
 * (1 − α) quantile is the limit) and the ACF for the drift charts (none: the drift rule is off for this
 * baseline, as before).
 */
export function ruleBaselineOf(model: Pick<BaselineModel, 'alpha' | 'k'>, ref: EwmaReference | null): RuleBaseline {
	const law = (m: EwmaReference['t2'] | undefined, fallbackH: number): ShiftedChiSquare => {
		try {
			if (m) return shiftedChiSquare(m.moments ?? { mean: m.mean, sd: m.sd, skew: 0, n: 0 });
		} catch {
			// a degenerate reference: the limit's own law below
		}
		return { a: 0, g: 1 / chiSquareUpper(model.alpha, fallbackH), h: fallbackH };
	};
	return {
		shape: { t2: law(ref?.t2, Math.max(1, model.k)), q: law(ref?.q, 2) },
		drift: ref ? { t2: ref.t2, q: ref.q, n: ref.n } : null
	};
}

/** The five features that drove a wafer's worse statistic (Q contributions, or T² RBC when T² is worse). */
function leadingContributors(model: BaselineModel, values: Float64Array, p: ScoredPoint): string[] {
	try {
		const byQ = p.qRatio >= p.t2Ratio;
		const c = contributions(model, values, byQ ? 'q' : 'rbc');
		const v = byQ ? c.q : (c.t2 ?? c.q);
		return rankContributions(v, 5).map((x) => x.feature);
	} catch {
		return [];
	}
}

/** Merge points into the hourly rollups (read, combine, write: portable across SQLite and PostgreSQL). */
async function updateRollups(trx: Knex.Transaction | Knex, chamberId: number, recipeStepId: number, points: ScoredPoint[]) {
	const byHour = new Map<number, ScoredPoint[]>();
	for (const p of points) {
		const h = Math.floor(p.processedAt / HOUR) * HOUR;
		const g = byHour.get(h);
		if (g) g.push(p);
		else byHour.set(h, [p]);
	}
	const hours = [...byHour.keys()];
	const existing = new Map<number, { wafer_count: number; worst_ratio: number | null; worst_t2_ratio: number | null; worst_q_ratio: number | null; worst_wafer_step_id: number | null; alarm_wafer_count: number; seasoning_wafer_count: number }>();
	for (let i = 0; i < hours.length; i += 500) {
		const rows = await trx('hourly_rollups')
			.where({ chamber_id: chamberId, recipe_step_id: recipeStepId })
			.whereIn('hour_at', hours.slice(i, i + 500));
		for (const r of rows) existing.set(Number(r.hour_at), r);
	}
	const upserts = hours.map((h) => {
		const pts = byHour.get(h)!;
		const e = existing.get(h);
		let worst = e?.worst_ratio ?? -Infinity;
		let worstId = e?.worst_wafer_step_id ?? null;
		let t2w = e?.worst_t2_ratio ?? -Infinity;
		let qw = e?.worst_q_ratio ?? -Infinity;
		let alarmCount = e?.alarm_wafer_count ?? 0;
		let seasoningCount = e?.seasoning_wafer_count ?? 0;
		for (const p of pts) {
			// Seasoning wafers are counted, not judged: they stay out of the worst ratios (alarms held).
			if (p.seasoning) {
				seasoningCount++;
				continue;
			}
			if (p.worstRatio > worst) {
				worst = p.worstRatio;
				worstId = p.waferStepId;
			}
			t2w = Math.max(t2w, p.t2Ratio);
			qw = Math.max(qw, p.qRatio);
			if (p.worstRatio > 1) alarmCount++;
		}
		return {
			chamber_id: chamberId,
			recipe_step_id: recipeStepId,
			hour_at: h,
			wafer_count: (e?.wafer_count ?? 0) + pts.length,
			worst_ratio: Number.isFinite(worst) ? worst : null,
			worst_t2_ratio: Number.isFinite(t2w) ? t2w : null,
			worst_q_ratio: Number.isFinite(qw) ? qw : null,
			worst_wafer_step_id: worstId,
			alarm_wafer_count: alarmCount,
			seasoning_wafer_count: seasoningCount
		};
	});
	for (let i = 0; i < upserts.length; i += 100)
		await trx('hourly_rollups').insert(upserts.slice(i, i + 100)).onConflict(['chamber_id', 'recipe_step_id', 'hour_at']).merge();
}

/**
 * The wafer-steps among `rows` that fall within the seasoning window — the first `seasoningWafers`
 * wafer-steps of the chamber × recipe step after a wet clean (baseline policy).
 */
async function seasoningWafers(trx: Knex.Transaction | Knex, rows: NewWaferStep[]): Promise<Set<number>> {
	const out = new Set<number>();
	const { chamberId, recipeStepId } = rows[0];
	const n = (await getSetting('baseline_policy', trx)).seasoningWafers;
	if (n === 0) return out;
	const first = rows[0].processedAt;
	const last = rows[rows.length - 1].processedAt;
	const before = await trx('maintenance_events').where({ chamber_id: chamberId, kind: 'wet_clean' }).andWhere('at', '<=', first).max({ at: 'at' }).first();
	const within = await trx('maintenance_events').where({ chamber_id: chamberId, kind: 'wet_clean' }).andWhere('at', '>', first).andWhere('at', '<=', last).pluck('at');
	const cleans = [...(before?.at != null ? [Number(before.at)] : []), ...within.map(Number)];
	const mine = new Set(rows.map((r) => r.id));
	for (const at of cleans) {
		const ids = await trx('wafer_steps')
			.where({ chamber_id: chamberId, recipe_step_id: recipeStepId })
			.andWhere('processed_at', '>', at)
			.orderBy([{ column: 'processed_at' }, { column: 'id' }])
			.limit(n)
			.pluck('id');
		for (const id of ids) if (mine.has(id)) out.add(id);
	}
	return out;
}

async function hasScores(trx: Knex.Transaction | Knex, ids: number[]): Promise<boolean> {
	for (let i = 0; i < ids.length; i += 500) {
		const r = await trx('scores').whereIn('wafer_step_id', ids.slice(i, i + 500)).first('id');
		if (r) return true;
	}
	return false;
}

/** Recompute the rollups of the hours these points fall in from the current scores. */
async function rebuildRollups(trx: Knex.Transaction | Knex, chamberId: number, recipeStepId: number, points: ScoredPoint[]) {
	const hours = [...new Set(points.map((p) => Math.floor(p.processedAt / HOUR) * HOUR))].sort((a, b) => a - b);
	for (let i = 0; i < hours.length; i += 200) {
		const chunk = hours.slice(i, i + 200);
		await trx('hourly_rollups').where({ chamber_id: chamberId, recipe_step_id: recipeStepId }).whereIn('hour_at', chunk).delete();
		const from = chunk[0];
		const to = chunk[chunk.length - 1] + HOUR;
		const current = await trx('scores')
			.where({ chamber_id: chamberId, recipe_step_id: recipeStepId, current: true })
			.andWhere('processed_at', '>=', from)
			.andWhere('processed_at', '<', to)
			.select('wafer_step_id', 'processed_at', 't2', 'q', 't2_ratio', 'q_ratio', 'worst_ratio', 'seasoning');
		const set = new Set(chunk);
		const pts = current
			.filter((c) => set.has(Math.floor(Number(c.processed_at) / HOUR) * HOUR))
			.map((c) => ({ waferStepId: c.wafer_step_id, processedAt: Number(c.processed_at), t2: c.t2, q: c.q, t2Ratio: c.t2_ratio, qRatio: c.q_ratio, worstRatio: c.worst_ratio, seasoning: Boolean(c.seasoning) }));
		await updateRollups(trx, chamberId, recipeStepId, pts);
	}
}

/**
 * Rescore a chamber × recipe step's wafers since `since` against its active baseline, in chunks of
 * `chunk` wafer-steps, each in its own transaction (a crash leaves whole chunks done, and running it
 * again finishes the job). Alarms are not raised retroactively unless asked.
 */
export async function rescoreSince(
	k: Knex,
	q: { chamberId: number; recipeStepId: number; since: number; raiseAlarms?: boolean; chunk?: number },
	onProgress?: (done: number, total: number) => void
): Promise<{ rescored: number }> {
	const total = Number(
		(
			await k('wafer_steps')
				.where({ chamber_id: q.chamberId, recipe_step_id: q.recipeStepId })
				.andWhere('processed_at', '>=', q.since)
				.count({ n: '*' })
				.first()
		)?.n ?? 0
	);
	const size = q.chunk ?? 1000;
	let done = 0;
	let lastAt = q.since - 1;
	let lastId = 0;
	for (;;) {
		const rows = await k('wafer_steps')
			.where({ chamber_id: q.chamberId, recipe_step_id: q.recipeStepId })
			.andWhere((w) => w.where('processed_at', '>', lastAt).orWhere((x) => x.where('processed_at', lastAt).andWhere('id', '>', lastId)))
			.orderBy([{ column: 'processed_at' }, { column: 'id' }])
			.limit(size)
			.select('id', 'chamber_id', 'recipe_step_id', 'processed_at', 'feature_set_version', 'feature_values');
		if (rows.length === 0) break;
		await k.transaction((trx) =>
			scoreWaferSteps(
				trx,
				rows.map((r) => ({
					id: r.id,
					chamberId: r.chamber_id,
					recipeStepId: r.recipe_step_id,
					processedAt: Number(r.processed_at),
					featureSetVersion: r.feature_set_version,
					values: decodeValues(r.feature_values)
				})),
				{ raiseAlarms: q.raiseAlarms ?? false }
			)
		);
		done += rows.length;
		const last = rows[rows.length - 1];
		lastAt = Number(last.processed_at);
		lastId = last.id;
		onProgress?.(done, total);
	}
	return { rescored: done };
}
