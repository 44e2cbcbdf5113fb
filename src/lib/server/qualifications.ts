/**
 * Qualification campaigns, the repository: store a campaign and its drafts, read them for the review,
 * approve them. The background work (fitting, rescoring) is in qualification-runner.ts.
 *
 * Every campaign and every draft is a row: a process claims a draft (state 'working', claimed_at),
 * fits it and records the outcome, so progress survives a restart and any process answers for it.
 * A claim older than {@link LEASE_MS} is taken over by the next runner (the web process that took
 * the request, or the scheduled job), so a crash delays a draft, never loses it. Approval never
 * happens here by itself: Lockstep drafts and recommends; an engineer approves.
 */
import type { Knex } from 'knex';
import { approveBaseline, BaselineError } from './baselines.ts';
import { db } from './db.ts';
import { describeRule, type GoldenRule, type ScreenedOut } from './golden-sets.ts';
import { getSetting } from './settings.ts';
import { now } from './time.ts';

export class QualificationError extends Error {
	constructor(
		message: string,
		readonly field?: string,
		readonly status = 400
	) {
		super(message);
	}
}

/** A claim older than this is considered abandoned (its process stopped) and is taken over. */
export const LEASE_MS = 10 * 60_000;

const idOf = (r: unknown) => (typeof r === 'object' && r !== null ? (r as { id: number }).id : (r as number));
const parse = <T>(s: string | null, dflt: T): T => (s ? (JSON.parse(s) as T) : dflt);

export interface NewCampaign {
	recipeStepIds: number[];
	chamberIds: number[];
	rule: GoldenRule;
	components: number | 'auto';
	createdBy: string | null;
	kind?: 'campaign' | 'requalify';
	label?: string;
}

/** Store a campaign with one pending draft per chamber × recipe step; nothing is fitted yet. */
export async function createCampaign(c: NewCampaign, k: Knex = db()): Promise<number> {
	if (c.recipeStepIds.length === 0) throw new QualificationError('Choose at least one recipe step.', 'step');
	if (c.chamberIds.length === 0) throw new QualificationError('No chamber matches: choose at least one.', 'chambers');
	const label = c.label ?? `${c.chamberIds.length} chamber${c.chamberIds.length === 1 ? '' : 's'} × ${c.recipeStepIds.length} step${c.recipeStepIds.length === 1 ? '' : 's'}, ${describeRule(c.rule)}`;
	return k.transaction(async (trx) => {
		const [row] = await trx('qualification_campaigns')
			.insert({ kind: c.kind ?? 'campaign', state: 'drafting', golden_json: JSON.stringify(c.rule), components: String(c.components), label: label.slice(0, 200), created_by: c.createdBy, created_at: now() })
			.returning('id');
		const id = idOf(row);
		const rows = c.recipeStepIds.flatMap((s) => c.chamberIds.map((ch) => ({ campaign_id: id, chamber_id: ch, recipe_step_id: s, state: 'pending' })));
		for (let i = 0; i < rows.length; i += 200) await trx('qualification_drafts').insert(rows.slice(i, i + 200));
		return id;
	});
}

export interface CampaignDraft {
	id: number;
	chamber: string;
	chamberId: number;
	recipe: string;
	step: string;
	recipeStepId: number;
	state: string;
	baselineId: number | null;
	n: number | null;
	k: number | null;
	candidates: number | null;
	screenedOut: ScreenedOut[];
	warnings: string[];
	message: string | null;
	limits: { alpha: number; t2: number; q: number; t2Warning: number; qWarning: number } | null;
	baselineStatus: string | null;
	goldenFrom: number | null;
	rescore: { state: string | null; rescored: number | null };
}

export interface Campaign {
	id: number;
	kind: 'campaign' | 'requalify';
	state: 'drafting' | 'review' | 'approved' | 'failed';
	label: string;
	rule: GoldenRule;
	components: string;
	createdBy: string | null;
	createdByName: string | null;
	createdAt: number;
	finishedAt: number | null;
	approvedBy: string | null;
	approvedAt: number | null;
	message: string | null;
	progress: { total: number; done: number; drafted: number; failed: number; approved: number; rescoring: number; rescored: number };
}

// eslint-disable-next-line @typescript-eslint/no-explicit-any
function toCampaign(r: any, counts: Campaign['progress']): Campaign {
	return {
		id: r.id,
		kind: r.kind,
		state: r.state,
		label: r.label,
		rule: parse(r.golden_json, { kind: 'afterWetClean', count: 30 } as GoldenRule),
		components: r.components,
		createdBy: r.created_by,
		createdByName: r.created_name ?? null,
		createdAt: Number(r.created_at),
		finishedAt: r.finished_at == null ? null : Number(r.finished_at),
		approvedBy: r.approved_name ?? null,
		approvedAt: r.approved_at == null ? null : Number(r.approved_at),
		message: r.message,
		progress: counts
	};
}

async function progressOf(k: Knex, ids: number[]): Promise<Map<number, Campaign['progress']>> {
	const out = new Map<number, Campaign['progress']>();
	if (ids.length === 0) return out;
	const rows = await k('qualification_drafts').whereIn('campaign_id', ids).groupBy('campaign_id', 'state', 'rescore_state').select('campaign_id', 'state', 'rescore_state', k.raw('count(*) as n'));
	for (const id of ids) out.set(id, { total: 0, done: 0, drafted: 0, failed: 0, approved: 0, rescoring: 0, rescored: 0 });
	for (const r of rows) {
		const p = out.get(r.campaign_id)!;
		const n = Number(r.n);
		p.total += n;
		if (!['pending', 'working'].includes(r.state)) p.done += n;
		if (r.state === 'drafted') p.drafted += n;
		if (r.state === 'failed') p.failed += n;
		if (r.state === 'approved') p.approved += n;
		if (r.rescore_state === 'pending' || r.rescore_state === 'running') p.rescoring += n;
		if (r.rescore_state === 'done') p.rescored += n;
	}
	return out;
}

const campaignQuery = (k: Knex) =>
	k('qualification_campaigns as q')
		.leftJoin('users as uc', 'uc.id', 'q.created_by')
		.leftJoin('users as ua', 'ua.id', 'q.approved_by')
		.select('q.*', 'uc.display_name as created_name', 'ua.display_name as approved_name');

export async function listCampaigns(limit = 100, k: Knex = db()): Promise<Campaign[]> {
	const rows = await campaignQuery(k).orderBy('q.id', 'desc').limit(limit);
	const p = await progressOf(k, rows.map((r) => r.id));
	return rows.map((r) => toCampaign(r, p.get(r.id)!));
}

export async function getCampaign(id: number, k: Knex = db()): Promise<{ campaign: Campaign; drafts: CampaignDraft[] } | null> {
	const row = await campaignQuery(k).where('q.id', id).first();
	if (!row) return null;
	const p = await progressOf(k, [id]);
	const drafts = await k('qualification_drafts as d')
		.join('chambers as c', 'c.id', 'd.chamber_id')
		.join('recipe_steps as rs', 'rs.id', 'd.recipe_step_id')
		.join('recipes as r', 'r.id', 'rs.recipe_id')
		.leftJoin('baselines as b', 'b.id', 'd.baseline_id')
		.where('d.campaign_id', id)
		.orderBy([{ column: 'r.code' }, { column: 'rs.position' }, { column: 'c.code' }])
		.select('d.*', 'c.code as chamber', 'r.code as recipe', 'rs.name as step', 'b.n', 'b.k', 'b.alpha', 'b.t2_limit', 'b.q_limit', 'b.t2_warning_limit', 'b.q_warning_limit', 'b.status as baseline_status');
	return {
		campaign: toCampaign(row, p.get(id)!),
		drafts: drafts.map((d) => ({
			id: d.id,
			chamber: d.chamber,
			chamberId: d.chamber_id,
			recipe: d.recipe,
			step: d.step,
			recipeStepId: d.recipe_step_id,
			state: d.state,
			baselineId: d.baseline_id,
			n: d.n ?? null,
			k: d.k ?? null,
			candidates: d.candidates,
			screenedOut: parse(d.screened_out_json, []),
			warnings: parse(d.warnings_json, []),
			message: d.message,
			limits: d.t2_limit == null ? null : { alpha: d.alpha, t2: d.t2_limit, q: d.q_limit, t2Warning: d.t2_warning_limit, qWarning: d.q_warning_limit },
			baselineStatus: d.baseline_status ?? null,
			goldenFrom: d.golden_from == null ? null : Number(d.golden_from),
			rescore: { state: d.rescore_state, rescored: d.rescored }
		}))
	};
}

export interface CampaignApproval {
	approved: { baselineId: number; chamber: string; recipe: string; step: string; retired: number | null }[];
	refused: { baselineId: number; chamber: string; reason: string }[];
}

/**
 * Approve a campaign's drafts: the listed baselines, or by default every fitted draft without a
 * warning. Under four-eyes the approver must not be the engineer who started the campaign (each
 * baseline's own check applies too). Each approval is its own transaction (approveBaseline), and the
 * approved drafts are queued for rescoring since their golden window began.
 */
export async function approveCampaign(id: number, approverId: string, baselineIds: number[] | undefined, k: Knex = db()): Promise<CampaignApproval> {
	const found = await getCampaign(id, k);
	if (!found) throw new QualificationError(`No qualification campaign ${id}.`, 'id', 404);
	const { campaign, drafts } = found;
	if (campaign.state === 'drafting') throw new QualificationError('The campaign is still drafting; approve once every draft is fitted.', 'id', 409);
	const policy = await getSetting('baseline_policy', k);
	if (policy.fourEyes && campaign.createdBy === approverId)
		throw new QualificationError('Policy requires a second engineer: the campaign must be approved by someone other than the engineer who started it.', 'approver', 403);
	const open = drafts.filter((d) => d.state === 'drafted' && d.baselineId !== null);
	let pick: CampaignDraft[];
	if (baselineIds) {
		const byId = new Map(open.map((d) => [d.baselineId!, d]));
		const unknown = baselineIds.filter((b) => !byId.has(b));
		if (unknown.length) throw new QualificationError(`Not a draft awaiting approval in this campaign: baseline${unknown.length === 1 ? '' : 's'} ${unknown.join(', ')}.`, 'baselineIds');
		pick = baselineIds.map((b) => byId.get(b)!);
	} else pick = open.filter((d) => d.warnings.length === 0);
	const out: CampaignApproval = { approved: [], refused: [] };
	for (const d of pick) {
		try {
			const r = await approveBaseline(d.baselineId!, approverId, k);
			await k('qualification_drafts').where({ id: d.id }).update({ state: 'approved', rescore_state: 'pending', rescore_claimed_at: null });
			out.approved.push({ baselineId: d.baselineId!, chamber: d.chamber, recipe: d.recipe, step: d.step, retired: r.retired });
		} catch (e) {
			if (!(e instanceof BaselineError)) throw e;
			out.refused.push({ baselineId: d.baselineId!, chamber: d.chamber, reason: e.message });
		}
	}
	if (out.approved.length) {
		const left = await k('qualification_drafts').where({ campaign_id: id, state: 'drafted' }).count({ n: '*' }).first();
		await k('qualification_campaigns')
			.where({ id })
			.update({ approved_by: approverId, approved_at: now(), rescore_state: 'running', ...(Number(left?.n ?? 0) === 0 ? { state: 'approved' } : {}) });
	}
	return out;
}

