/**
 * Read model of the baseline screens: the list per chamber × recipe step (and the fleet models), and
 * one chamber × step's workspace — active model, drafts under review, history and golden candidates.
 * The lifecycle itself (draft, approve, discard, rescore) lives in baselines.ts and scoring.ts.
 */
import type { Knex } from 'knex';
import { goldenCandidates, type BaselineSummary, type GoldenCandidate } from '../baselines.ts';
import { db } from '../db.ts';
import { getSetting } from '../settings.ts';

export interface BaselineRow {
	id: number;
	scope: 'chamber' | 'fleet';
	version: number;
	status: 'draft' | 'active' | 'retired';
	n: number;
	k: number;
	alpha: number;
	warningAlpha: number;
	scaling: string;
	t2Limit: number;
	qLimit: number;
	trainFrom: number | null;
	trainTo: number | null;
	builtBy: string | null;
	builtById: string | null;
	builtAt: number;
	approvedBy: string | null;
	approvedAt: number | null;
	retiredAt: number | null;
	note: string | null;
}

function baselineQuery(k: Knex) {
	return k('baselines as b')
		.leftJoin('users as ub', 'ub.id', 'b.built_by')
		.leftJoin('users as ua', 'ua.id', 'b.approved_by')
		.select(
			'b.id',
			'b.scope',
			'b.chamber_id',
			'b.recipe_step_id',
			'b.version',
			'b.status',
			'b.n',
			'b.k',
			'b.alpha',
			'b.warning_alpha',
			'b.scaling',
			'b.t2_limit',
			'b.q_limit',
			'b.train_from',
			'b.train_to',
			'b.built_by',
			'ub.display_name as built_name',
			'b.built_at',
			'ua.display_name as approved_name',
			'b.approved_at',
			'b.retired_at',
			'b.note'
		);
}

const num = (v: unknown) => (v === null || v === undefined ? null : Number(v));
// eslint-disable-next-line @typescript-eslint/no-explicit-any
function toRow(r: any): BaselineRow {
	return {
		id: r.id,
		scope: r.scope,
		version: r.version,
		status: r.status,
		n: r.n,
		k: r.k,
		alpha: r.alpha,
		warningAlpha: r.warning_alpha,
		scaling: r.scaling,
		t2Limit: r.t2_limit,
		qLimit: r.q_limit,
		trainFrom: num(r.train_from),
		trainTo: num(r.train_to),
		builtBy: r.built_name ?? null,
		builtById: r.built_by ?? null,
		builtAt: Number(r.built_at),
		approvedBy: r.approved_name ?? null,
		approvedAt: num(r.approved_at),
		retiredAt: num(r.retired_at),
		note: r.note
	};
}

export interface PairRow {
	chamberId: number;
	chamberCode: string;
	areaName: string;
	recipeStepId: number;
	recipeCode: string;
	stepName: string;
	waferSteps: number;
	lastWaferAt: number | null;
	noBaselineWafers: number;
	/** chamber in requalify and this step's active baseline approved before it began (or none) */
	requalify: boolean;
	requalifySince: number | null;
	active: BaselineRow | null;
	drafts: number;
}

export async function listBaselinePairs(q: { chamber?: string | null; area?: string | null } = {}, k: Knex = db()): Promise<PairRow[]> {
	const pairs = await k('wafer_steps as w')
		.join('chambers as c', 'c.id', 'w.chamber_id')
		.join('tools as t', 't.id', 'c.tool_id')
		.join('areas as ar', 'ar.id', 't.area_id')
		.join('recipe_steps as rs', 'rs.id', 'w.recipe_step_id')
		.join('recipes as r', 'r.id', 'rs.recipe_id')
		.modify((qb) => {
			if (q.chamber) qb.where('c.code', q.chamber);
			if (q.area) qb.where('ar.code', q.area);
		})
		.groupBy('w.chamber_id', 'c.code', 'ar.name', 'w.recipe_step_id', 'r.code', 'rs.name', 'rs.position', 'c.requalify_since')
		.orderBy([{ column: 'c.code' }, { column: 'r.code' }, { column: 'rs.position' }])
		.select(
			'w.chamber_id',
			'c.code as chamber_code',
			'ar.name as area_name',
			'w.recipe_step_id',
			'r.code as recipe_code',
			'rs.name as step_name',
			'c.requalify_since',
			k.raw('count(*) as n'),
			k.raw('max(w.processed_at) as last_at'),
			k.raw(`sum(case when w.scoring_state = 'no_baseline' then 1 else 0 end) as no_baseline`)
		);
	const active = (await baselineQuery(k).where({ 'b.scope': 'chamber', 'b.status': 'active' })).map((r) => ({ ...toRow(r), chamberId: r.chamber_id, stepId: r.recipe_step_id }));
	const drafts = await k('baselines').where({ scope: 'chamber', status: 'draft' }).groupBy('chamber_id', 'recipe_step_id').select('chamber_id', 'recipe_step_id', k.raw('count(*) as n'));
	return pairs.map((p) => {
		const a = active.find((x) => x.chamberId === p.chamber_id && x.stepId === p.recipe_step_id) ?? null;
		const since = num(p.requalify_since);
		return {
			chamberId: p.chamber_id,
			chamberCode: p.chamber_code,
			areaName: p.area_name,
			recipeStepId: p.recipe_step_id,
			recipeCode: p.recipe_code,
			stepName: p.step_name,
			waferSteps: Number(p.n),
			lastWaferAt: num(p.last_at),
			noBaselineWafers: Number(p.no_baseline),
			requalify: since !== null && (a === null || (a.approvedAt ?? 0) < since),
			requalifySince: since,
			active: a,
			drafts: Number(drafts.find((d) => d.chamber_id === p.chamber_id && d.recipe_step_id === p.recipe_step_id)?.n ?? 0)
		};
	});
}

export async function listFleetModels(k: Knex = db()): Promise<(BaselineRow & { recipeCode: string; stepName: string; recipeStepId: number })[]> {
	const rows = await baselineQuery(k)
		.join('recipe_steps as rs', 'rs.id', 'b.recipe_step_id')
		.join('recipes as r', 'r.id', 'rs.recipe_id')
		.where({ 'b.scope': 'fleet', 'b.status': 'active' })
		.select('r.code as recipe_code', 'rs.name as step_name')
		.orderBy([{ column: 'r.code' }, { column: 'rs.position' }]);
	return rows.map((r) => ({ ...toRow(r), recipeCode: r.recipe_code, stepName: r.step_name, recipeStepId: r.recipe_step_id }));
}

export interface Workspace {
	chamber: { id: number; code: string; toolCode: string; areaName: string; requalifySince: number | null; requalifyReason: string | null };
	step: { id: number; recipeCode: string; recipeName: string; stepName: string; featureSetVersion: number; features: number };
	active: (BaselineRow & { summary: BaselineSummary | null }) | null;
	drafts: (BaselineRow & { summary: BaselineSummary | null })[];
	history: BaselineRow[];
	range: { first: number | null; last: number | null; total: number };
	policy: { fourEyes: boolean; alpha: number; warningAlpha: number; seasoningWafers: number };
}

function parseSummary(json: string | null): BaselineSummary | null {
	if (!json) return null;
	try {
		return JSON.parse(json) as BaselineSummary;
	} catch {
		return null;
	}
}

export async function baselineWorkspace(chamberCode: string, recipeStepId: number, k: Knex = db()): Promise<Workspace | null> {
	const ch = await k('chambers as c')
		.join('tools as t', 't.id', 'c.tool_id')
		.join('areas as ar', 'ar.id', 't.area_id')
		.where('c.code', chamberCode)
		.first('c.id', 'c.code', 't.code as tool_code', 'ar.name as area_name', 'c.requalify_since', 'c.requalify_reason');
	const st = await k('recipe_steps as rs').join('recipes as r', 'r.id', 'rs.recipe_id').where('rs.id', recipeStepId).first('rs.id', 'r.code', 'r.name', 'rs.name as step_name', 'rs.feature_set_version');
	if (!ch || !st) return null;
	const features = Number((await k('features').where({ recipe_step_id: st.id, set_version: st.feature_set_version }).count({ n: '*' }).first())?.n ?? 0);
	const all = await baselineQuery(k)
		.where({ 'b.scope': 'chamber', 'b.chamber_id': ch.id, 'b.recipe_step_id': st.id })
		.select('b.summary_json')
		.orderBy('b.version', 'desc');
	const withSummary = (r: (typeof all)[number]) => ({ ...toRow(r), summary: parseSummary(r.summary_json) });
	const span = await k('wafer_steps').where({ chamber_id: ch.id, recipe_step_id: st.id }).min({ first: 'processed_at' }).max({ last: 'processed_at' }).count({ n: '*' }).first();
	const policy = await getSetting('baseline_policy', k);
	const activeRow = all.find((r) => r.status === 'active');
	return {
		chamber: { id: ch.id, code: ch.code, toolCode: ch.tool_code, areaName: ch.area_name, requalifySince: num(ch.requalify_since), requalifyReason: ch.requalify_reason },
		step: { id: st.id, recipeCode: st.code, recipeName: st.name, stepName: st.step_name, featureSetVersion: st.feature_set_version, features },
		active: activeRow ? withSummary(activeRow) : null,
		drafts: all.filter((r) => r.status === 'draft').map(withSummary),
		history: all.filter((r) => r.status === 'retired').map(toRow),
		range: { first: num(span?.first), last: num(span?.last), total: Number(span?.n ?? 0) },
		policy: { fourEyes: policy.fourEyes, alpha: policy.alpha, warningAlpha: policy.warningAlpha, seasoningWafers: policy.seasoningWafers }
	};
}

export const MAX_CANDIDATES = 1500;

/** Golden candidates of a range (the newest MAX_CANDIDATES when there are more), with the reasons. */
export async function candidatesFor(q: { chamberId: number; recipeStepId: number; from: number; to: number }, k: Knex = db()): Promise<{ rows: GoldenCandidate[]; truncated: number }> {
	const rows = await goldenCandidates(q, k);
	const truncated = Math.max(0, rows.length - MAX_CANDIDATES);
	return { rows: truncated ? rows.slice(-MAX_CANDIDATES) : rows, truncated };
}
