/**
 * Qualification campaigns: draft the baselines of many chamber × recipe steps from one golden rule,
 * in the background, for one review and one approval.
 *
 * Every campaign and every draft is a row: a process claims a draft (state 'working', claimed_at),
 * fits it and records the outcome, so progress survives a restart and any process answers for it.
 * A claim older than {@link LEASE_MS} is taken over by the next runner (the web process that took
 * the request, or the scheduled job), so a crash delays a draft, never loses it. Approval never
 * happens here by itself: Lockstep drafts and recommends; an engineer approves.
 */
import type { Knex } from 'knex';
import { approveBaseline, BaselineError, createDraftBaseline } from './baselines.ts';
import { db } from './db.ts';
import { describeRule, selectGolden, type GoldenRule, type ScreenedOut } from './golden-sets.ts';
import { rescoreSince } from './scoring.ts';
import { getSetting } from './settings.ts';
import { startTask } from './tasks.ts';
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

/** Take one draft for this process: pending, or working under an expired claim. */
async function claimDraft(k: Knex, campaignId: number | null): Promise<{ id: number; campaignId: number; chamberId: number; recipeStepId: number } | null> {
	for (let attempt = 0; attempt < 5; attempt++) {
		const t = now();
		const cand = await k('qualification_drafts')
			.modify((qb) => (campaignId === null ? qb : qb.where({ campaign_id: campaignId })))
			.andWhere((w) => w.where({ state: 'pending' }).orWhere((x) => x.where({ state: 'working' }).andWhere('claimed_at', '<', t - LEASE_MS)))
			.orderBy('id')
			.first('id', 'campaign_id', 'chamber_id', 'recipe_step_id', 'state', 'claimed_at');
		if (!cand) return null;
		// Compare-and-set on what was read: another process that took it first wins.
		const n = await k('qualification_drafts')
			.where({ id: cand.id, state: cand.state })
			.modify((qb) => (cand.claimed_at == null ? qb.whereNull('claimed_at') : qb.where('claimed_at', cand.claimed_at)))
			.update({ state: 'working', claimed_at: t });
		if (n === 1) return { id: cand.id, campaignId: cand.campaign_id, chamberId: cand.chamber_id, recipeStepId: cand.recipe_step_id };
	}
	return null;
}

/** Fit one claimed draft and record the outcome; a failure is recorded on the row, not thrown. */
async function fitDraft(k: Knex, d: { id: number; campaignId: number; chamberId: number; recipeStepId: number }): Promise<void> {
	const camp = await k('qualification_campaigns').where({ id: d.campaignId }).first('golden_json', 'components', 'created_by');
	const rule = parse<GoldenRule>(camp.golden_json, { kind: 'afterWetClean', count: 30 });
	const components = camp.components === 'auto' ? 'auto' : Number(camp.components);
	let sel;
	try {
		sel = await selectGolden(d.chamberId, d.recipeStepId, rule, k);
	} catch (e) {
		await k('qualification_drafts').where({ id: d.id }).update({ state: 'failed', message: e instanceof Error ? e.message : String(e), claimed_at: null });
		return;
	}
	const base = { candidates: sel.candidates.length, golden_from: sel.goldenFrom, claimed_at: null };
	if (sel.chosen.length < 10) {
		await k('qualification_drafts')
			.where({ id: d.id })
			.update({ ...base, state: 'failed', screened_out_json: JSON.stringify(sel.screenedOut), warnings_json: JSON.stringify(sel.warnings), message: sel.chosen.length === 0 && sel.candidates.length === 0 ? 'No wafer matches the golden rule on this chamber × step.' : `Only ${sel.chosen.length} golden wafers pass: a baseline needs at least 10.` });
		return;
	}
	try {
		const draft = await createDraftBaseline(
			{ chamberId: d.chamberId, recipeStepId: d.recipeStepId, waferStepIds: sel.chosen, components, builtBy: camp.created_by, note: `Qualification campaign #${d.campaignId}: ${describeRule(rule)}` },
			k
		);
		// Phase I (fitted-model screening, written by createDraftBaseline when present) adds its own
		// flagged wafers and warnings to the robust pre-screen's.
		const summary = draft.summary as unknown as { phaseOne?: { flagged?: ScreenedOut[] }; warnings?: string[] };
		const phaseOne = (summary.phaseOne?.flagged ?? []).map((f) => ({ waferStepId: f.waferStepId, waferId: f.waferId, reason: `Phase I: ${f.reason}` }));
		await k('qualification_drafts')
			.where({ id: d.id })
			.update({
				...base,
				state: 'drafted',
				baseline_id: draft.id,
				screened_out_json: JSON.stringify([...sel.screenedOut, ...phaseOne]),
				warnings_json: JSON.stringify([...(summary.warnings ?? []), ...sel.warnings]),
				message: null
			});
	} catch (e) {
		if (!(e instanceof BaselineError)) throw e;
		await k('qualification_drafts').where({ id: d.id }).update({ ...base, state: 'failed', message: e.message, screened_out_json: JSON.stringify(sel.screenedOut), warnings_json: JSON.stringify(sel.warnings) });
	}
}

/** When no draft of a campaign is pending or being fitted, it goes to review. */
async function settleCampaign(k: Knex, campaignId: number): Promise<void> {
	const open = await k('qualification_drafts').where({ campaign_id: campaignId }).whereIn('state', ['pending', 'working']).count({ n: '*' }).first();
	if (Number(open?.n ?? 0) > 0) return;
	const drafted = await k('qualification_drafts').where({ campaign_id: campaignId }).whereIn('state', ['drafted', 'approved']).count({ n: '*' }).first();
	await k('qualification_campaigns')
		.where({ id: campaignId, state: 'drafting' })
		.update({ state: Number(drafted?.n ?? 0) > 0 ? 'review' : 'failed', finished_at: now(), message: Number(drafted?.n ?? 0) > 0 ? null : 'No draft could be fitted; each row says why.' });
}

/**
 * Fit every claimable draft (of one campaign, or of all), one at a time. Returns how many were fitted.
 * `onProgress` is called after each.
 */
export async function runDrafts(campaignId: number | null = null, k: Knex = db(), onProgress?: () => void): Promise<number> {
	let done = 0;
	for (;;) {
		const d = await claimDraft(k, campaignId);
		if (!d) break;
		try {
			await fitDraft(k, d);
		} catch (e) {
			await k('qualification_drafts').where({ id: d.id }).update({ state: 'failed', message: `Unexpected error: ${e instanceof Error ? e.message : String(e)}`, claimed_at: null });
		}
		await settleCampaign(k, d.campaignId);
		done++;
		onProgress?.();
	}
	// Campaigns whose last draft another process finished, or with no drafts left to claim.
	const drafting = await k('qualification_campaigns').where({ state: 'drafting' }).modify((qb) => (campaignId === null ? qb : qb.where({ id: campaignId }))).select('id');
	for (const c of drafting) await settleCampaign(k, c.id);
	return done;
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

/**
 * Rescore every approved draft still waiting (of one campaign, or all): each chamber × step since its
 * golden window began, golden wafers included, against the new active baseline. Claimed like drafts;
 * rescoreSince is idempotent, so a taken-over claim only repeats work.
 */
export async function runRescores(campaignId: number | null = null, k: Knex = db(), onProgress?: (done: number, total: number) => void): Promise<number> {
	const total = Number(
		(
			await k('qualification_drafts')
				.modify((qb) => (campaignId === null ? qb : qb.where({ campaign_id: campaignId })))
				.whereIn('rescore_state', ['pending', 'running'])
				.count({ n: '*' })
				.first()
		)?.n ?? 0
	);
	let done = 0;
	const touched = new Set<number>();
	for (;;) {
		const t = now();
		const cand = await k('qualification_drafts')
			.modify((qb) => (campaignId === null ? qb : qb.where({ campaign_id: campaignId })))
			.andWhere((w) => w.where({ rescore_state: 'pending' }).orWhere((x) => x.where({ rescore_state: 'running' }).andWhere('rescore_claimed_at', '<', t - LEASE_MS)))
			.orderBy('id')
			.first('id', 'campaign_id', 'chamber_id', 'recipe_step_id', 'golden_from', 'rescore_state', 'rescore_claimed_at');
		if (!cand) break;
		const n = await k('qualification_drafts')
			.where({ id: cand.id, rescore_state: cand.rescore_state })
			.modify((qb) => (cand.rescore_claimed_at == null ? qb.whereNull('rescore_claimed_at') : qb.where('rescore_claimed_at', cand.rescore_claimed_at)))
			.update({ rescore_state: 'running', rescore_claimed_at: t });
		if (n !== 1) continue;
		touched.add(cand.campaign_id);
		try {
			const r = await rescoreSince(k, { chamberId: cand.chamber_id, recipeStepId: cand.recipe_step_id, since: Number(cand.golden_from ?? 0), chunk: 500 }, () =>
				// keep the claim alive while a long history is rescored
				void k('qualification_drafts').where({ id: cand.id }).update({ rescore_claimed_at: now() }).then(() => undefined)
			);
			await k('qualification_drafts').where({ id: cand.id }).update({ rescore_state: 'done', rescored: r.rescored });
		} catch (e) {
			await k('qualification_drafts').where({ id: cand.id }).update({ rescore_state: 'failed', message: `Rescoring failed: ${e instanceof Error ? e.message : String(e)}` });
		}
		done++;
		onProgress?.(done, total);
	}
	for (const c of touched) {
		const left = await k('qualification_drafts').where({ campaign_id: c }).whereIn('rescore_state', ['pending', 'running']).count({ n: '*' }).first();
		if (Number(left?.n ?? 0) === 0) {
			const failed = await k('qualification_drafts').where({ campaign_id: c, rescore_state: 'failed' }).count({ n: '*' }).first();
			await k('qualification_campaigns').where({ id: c }).update({ rescore_state: Number(failed?.n ?? 0) > 0 ? 'failed' : 'done' });
		}
	}
	return done;
}

/**
 * Fit a new campaign's drafts in this process without waiting (the request answers 202 first). If
 * the process stops midway, the scheduled job takes the rest over once the claims expire.
 */
export function launchCampaign(id: number, k: Knex = db()): void {
	setImmediate(() => {
		runDrafts(id, k).catch((e) => console.error(`qualification campaign ${id}: drafting stopped:`, e));
	});
}

/**
 * Rescore a campaign's approved drafts as a background task of this process (its id answers
 * progress at /api/tasks/{id}); the rows record each chamber × step's outcome, and the scheduled job
 * finishes what a stopped process left.
 */
export function launchRescore(campaignId: number, userId: string | null, k: Knex = db()): string {
	return startTask({ kind: 'rescore', label: `Qualification campaign #${campaignId}: rescoring since each golden window`, createdBy: userId }, async (ctx) => {
		const n = await runRescores(campaignId, k, (done, total) => ctx.progress(done, total));
		return { chamberSteps: n };
	}).id;
}
