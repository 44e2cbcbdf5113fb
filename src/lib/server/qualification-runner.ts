/**
 * The background work of qualification campaigns: claim a draft, fit it, record the outcome; rescore
 * approved chamber × steps. Claims are rows (state + claimed_at): a claim older than
 * {@link LEASE_MS} belongs to a stopped process and is taken over, so the web process that took the
 * request and the scheduled job can share the work and a restart loses none of it.
 */
import type { Knex } from 'knex';
import { BaselineError, createDraftBaseline } from './baselines.ts';
import { db } from './db.ts';
import { describeRule, selectGolden, type GoldenRule, type ScreenedOut } from './golden-sets.ts';
import { LEASE_MS } from './qualifications.ts';
import { rescoreSince } from './scoring.ts';
import { startTask } from './tasks.ts';
import { now } from './time.ts';

const parse = <T>(s: string | null, dflt: T): T => (s ? (JSON.parse(s) as T) : dflt);

/**
 * Let the event loop poll for I/O between two pieces of work. better-sqlite3 answers Knex without
 * real I/O, so a loop of fits and queries settles promise after promise without ever reaching the
 * poll phase: requests arriving meanwhile wait, and a kept-alive socket whose 5 s idle timer fires
 * first is reset (measured: the second POST of a client during a 50-chamber campaign got
 * ECONNRESET). setImmediate runs after the poll phase, so awaiting it lets requests in.
 */
const breathe = () => new Promise<void>((r) => setImmediate(r));

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
		await breathe();
	}
	// Campaigns whose last draft another process finished, or with no drafts left to claim.
	const drafting = await k('qualification_campaigns').where({ state: 'drafting' }).modify((qb) => (campaignId === null ? qb : qb.where({ id: campaignId }))).select('id');
	for (const c of drafting) await settleCampaign(k, c.id);
	return done;
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
		await breathe();
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
