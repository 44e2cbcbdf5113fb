/**
 * Requalification after a wet clean: what each chamber in "requalify" still needs per recipe step,
 * and the scheduled proposal of its new baselines once enough in-control wafers past seasoning have
 * arrived. A proposal is a draft awaiting an engineer's approval — Lockstep never approves it.
 */
import type { Knex } from 'knex';
import { db } from './db.ts';
import { createCampaign } from './qualifications.ts';
import { runDrafts } from './qualification-runner.ts';
import { getSetting } from './settings.ts';
import { now } from './time.ts';

/** Wafers past seasoning a proposal is fitted on (common practice: a few lots' worth). */
export const REQUALIFY_WAFERS = 30;
/** A proposal that could not be fitted is tried again after this long (more wafers will have come). */
export const RETRY_MS = 3_600_000;

export interface RequalifyStep {
	recipeStepId: number;
	recipe: string;
	step: string;
	/** approved: a baseline approved since the requalify began; proposed: a draft awaits review or is being fitted; waiting: not enough wafers yet; manual: no wet clean to start from (part swap), pick golden wafers by hand; failed: the last proposal could not be fitted. */
	state: 'approved' | 'proposed' | 'waiting' | 'manual' | 'failed';
	pastSeasoning: number;
	needed: number;
	campaignId: number | null;
	message: string | null;
}

export interface RequalifyChamber {
	chamberId: number;
	chamber: string;
	since: number;
	reason: string | null;
	wetCleanAt: number | null;
	steps: RequalifyStep[];
}

/** Every chamber in requalify with each recipe step's state. */
export async function requalifyStatus(k: Knex = db()): Promise<RequalifyChamber[]> {
	const policy = await getSetting('baseline_policy', k);
	const chambers = await k('chambers').whereNotNull('requalify_since').orderBy('code').select('id', 'code', 'requalify_since', 'requalify_reason');
	const out: RequalifyChamber[] = [];
	for (const c of chambers) {
		const since = Number(c.requalify_since);
		const clean = await k('maintenance_events').where({ chamber_id: c.id, kind: 'wet_clean' }).andWhere('at', '>=', since).andWhere('at', '<=', now()).max({ at: 'at' }).first();
		const wetCleanAt = clean?.at == null ? null : Number(clean.at);
		const steps = await k('wafer_steps as w')
			.join('recipe_steps as rs', 'rs.id', 'w.recipe_step_id')
			.join('recipes as r', 'r.id', 'rs.recipe_id')
			.where('w.chamber_id', c.id)
			.groupBy('w.recipe_step_id', 'r.code', 'rs.name', 'rs.position')
			.orderBy([{ column: 'r.code' }, { column: 'rs.position' }])
			.select('w.recipe_step_id', 'r.code as recipe', 'rs.name as step', k.raw('sum(case when w.processed_at > ? then 1 else 0 end) as after', [wetCleanAt ?? since]));
		const approved = await k('baselines').where({ scope: 'chamber', chamber_id: c.id, status: 'active' }).andWhere('approved_at', '>=', since).select('recipe_step_id');
		const proposals = await k('qualification_drafts as d')
			.join('qualification_campaigns as q', 'q.id', 'd.campaign_id')
			.where({ 'd.chamber_id': c.id, 'q.kind': 'requalify' })
			.andWhere('q.created_at', '>=', since)
			.orderBy('d.id', 'desc')
			.select('d.recipe_step_id', 'd.state', 'd.campaign_id', 'd.message', 'q.created_at');
		out.push({
			chamberId: c.id,
			chamber: c.code,
			since,
			reason: c.requalify_reason,
			wetCleanAt,
			steps: steps.map((s) => {
				const past = wetCleanAt === null ? 0 : Math.max(0, Number(s.after) - policy.seasoningWafers);
				const base = { recipeStepId: s.recipe_step_id, recipe: s.recipe, step: s.step, pastSeasoning: past, needed: REQUALIFY_WAFERS, campaignId: null, message: null };
				if (approved.some((a) => a.recipe_step_id === s.recipe_step_id)) return { ...base, state: 'approved' as const };
				const p = proposals.find((x) => x.recipe_step_id === s.recipe_step_id);
				if (p && p.state !== 'failed') return { ...base, state: 'proposed' as const, campaignId: p.campaign_id };
				if (p) return { ...base, state: 'failed' as const, campaignId: p.campaign_id, message: p.message };
				if (wetCleanAt === null) return { ...base, state: 'manual' as const };
				return { ...base, state: 'waiting' as const };
			})
		});
	}
	return out;
}

/**
 * Propose the requalification baselines that are due: for each chamber in requalify after a wet
 * clean, the recipe steps with at least {@link REQUALIFY_WAFERS} wafers past seasoning and no
 * approved baseline or live proposal since, in one 'requalify' campaign per chamber (golden rule:
 * the first N in-control wafers after the wet clean, past seasoning). Drafts only; returns the
 * campaign ids made.
 */
export async function proposeRequalifications(k: Knex = db()): Promise<number[]> {
	const made: number[] = [];
	for (const c of await requalifyStatus(k)) {
		const due = c.steps.filter((s) => s.pastSeasoning >= REQUALIFY_WAFERS && (s.state === 'waiting' || s.state === 'failed'));
		// a failed proposal is retried at most once an hour
		const retryable: RequalifyStep[] = [];
		for (const s of due) {
			if (s.state === 'failed') {
				const last = await k('qualification_campaigns').where({ id: s.campaignId! }).first('created_at');
				if (last && Number(last.created_at) + RETRY_MS > now()) continue;
			}
			retryable.push(s);
		}
		if (retryable.length === 0) continue;
		const id = await createCampaign(
			{
				kind: 'requalify',
				recipeStepIds: retryable.map((s) => s.recipeStepId),
				chamberIds: [c.chamberId],
				rule: { kind: 'afterWetClean', count: REQUALIFY_WAFERS },
				components: 'auto',
				createdBy: null,
				label: `Requalification of ${c.chamber} after the wet clean (${retryable.length} step${retryable.length === 1 ? '' : 's'}), proposed by Lockstep`
			},
			k
		);
		made.push(id);
	}
	if (made.length) for (const id of made) await runDrafts(id, k);
	return made;
}
