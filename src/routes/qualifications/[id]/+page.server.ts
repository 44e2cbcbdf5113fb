import { error, fail } from '@sveltejs/kit';
import { hasRole } from '$lib/server/roles';
import { getSetting } from '$lib/server/settings';
import { approveCampaign, getCampaign, QualificationError } from '$lib/server/qualifications';
import { launchRescore } from '$lib/server/qualification-runner';
import type { Actions, PageServerLoad } from './$types';

async function campaignOf(raw: string) {
	const id = Number(raw);
	const found = Number.isInteger(id) && id > 0 ? await getCampaign(id) : null;
	if (!found) error(404, `No qualification campaign ${raw}.`);
	return found;
}

export const load: PageServerLoad = async ({ params, locals }) => {
	const found = await campaignOf(params.id);
	const policy = await getSetting('baseline_policy');
	return {
		...found,
		fourEyes: policy.fourEyes,
		canAct: hasRole(locals.user?.role, 'engineer'),
		isCreator: found.campaign.createdBy !== null && found.campaign.createdBy === locals.user?.id
	};
};

export const actions: Actions = {
	approve: async ({ request, params, locals }) => {
		const { campaign } = await campaignOf(params.id);
		const f = await request.formData();
		const mode = String(f.get('mode') ?? 'all');
		let ids: number[] | undefined;
		if (mode === 'selected') {
			ids = f.getAll('baselineId').map(Number);
			if (ids.length === 0) return fail(400, { errors: { form: 'Tick the drafts to approve, or approve all without warnings.' } });
			if (ids.some((x) => !Number.isInteger(x) || x <= 0)) return fail(400, { errors: { form: 'The selection is not valid; reload the page.' } });
		}
		try {
			const r = await approveCampaign(campaign.id, locals.user!.id, ids);
			if (r.approved.length === 0 && r.refused.length === 0) return fail(400, { errors: { form: 'No draft without warnings is waiting: tick the ones to approve after reading their warnings.' } });
			const taskId = r.approved.length ? launchRescore(campaign.id, locals.user!.id) : null;
			return {
				taskId,
				refused: r.refused,
				message: `${r.approved.length} baseline${r.approved.length === 1 ? '' : 's'} approved; rescoring their wafers since each golden window began.${r.refused.length ? ` ${r.refused.length} refused (see below).` : ''}`
			};
		} catch (e) {
			if (e instanceof QualificationError) return fail(e.status === 404 ? 404 : 400, { errors: { form: e.message } });
			throw e;
		}
	}
};
