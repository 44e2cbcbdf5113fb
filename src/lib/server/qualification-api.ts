/**
 * The JSON shapes of the qualification API (kept out of the routes so that they stay thin and the
 * page and the API answer the same). Names are the published contract: keep them.
 */
import type { Campaign, CampaignDraft } from './qualifications.ts';

export function campaignAnswer(found: { campaign: Campaign; drafts: CampaignDraft[] }) {
	const { campaign: c, drafts } = found;
	return {
		id: c.id,
		kind: c.kind,
		state: c.state,
		label: c.label,
		progress: { ...c.progress, fraction: c.progress.total ? c.progress.done / c.progress.total : 1 },
		createdAt: new Date(c.createdAt).toISOString(),
		approvedAt: c.approvedAt === null ? null : new Date(c.approvedAt).toISOString(),
		drafts: drafts.map((d) => ({
			chamber: d.chamber,
			recipe: d.recipe,
			step: d.step,
			state: d.state,
			baselineId: d.baselineId,
			baselineStatus: d.baselineStatus,
			n: d.n,
			k: d.k,
			candidates: d.candidates,
			screenedOut: d.screenedOut.map((s) => ({ waferId: s.waferId, reason: s.reason })),
			warnings: d.warnings,
			message: d.message,
			limits: d.limits,
			rescore: d.rescore
		}))
	};
}

/** Who acts: the signed-in user, or the person a personal API token belongs to. */
export function actorOf(locals: App.Locals): string | null {
	const token = locals.apiToken as { userId?: string | null } | null;
	return locals.user?.id ?? token?.userId ?? null;
}
