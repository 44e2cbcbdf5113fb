import { fail, redirect } from '@sveltejs/kit';
import { fromLocalInput, safeZone } from '$lib/components/display/format';
import { hasRole } from '$lib/server/roles';
import { campaignFormOptions, listFromForm, parseCampaignRequest, splitList } from '$lib/server/qualification-input';
import { createCampaign, listCampaigns, QualificationError } from '$lib/server/qualifications';
import { launchCampaign } from '$lib/server/qualification-runner';
import { requalifyStatus } from '$lib/server/requalification';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals }) => ({
	campaigns: await listCampaigns(),
	requalify: await requalifyStatus(),
	options: await campaignFormOptions(),
	canAct: hasRole(locals.user?.role, 'engineer')
});

const text = (f: FormData, n: string) => String(f.get(n) ?? '').trim();

/** The form's fields as a POST /api/qualifications body, so both are checked by the same code. */
async function bodyFromForm(f: FormData, zone: string): Promise<{ body: Record<string, unknown>; errors: Record<string, string> }> {
	const errors: Record<string, string> = {};
	const body: Record<string, unknown> = { recipe: text(f, 'recipe') };
	const steps = f.getAll('steps').map(String).filter(Boolean);
	if (steps.length === 0) errors.steps = 'Tick at least one recipe step.';
	else body.steps = steps;
	const scope = text(f, 'scope');
	if (scope === 'area') body.area = text(f, 'area') || undefined;
	else if (scope === 'tool') body.tool = text(f, 'tool') || undefined;
	else if (scope === 'list') {
		const list = splitList(text(f, 'chambers'));
		if (list.length === 0) errors.chambers = 'List the chamber codes, one a line or separated by commas.';
		else body.chambers = list;
	}
	if (scope === 'area' && !body.area) errors.area = 'Choose an area.';
	if (scope === 'tool' && !body.tool) errors.tool = 'Choose a tool.';
	const rule = text(f, 'rule');
	if (rule === 'range') {
		const from = fromLocalInput(text(f, 'from'), zone);
		const to = fromLocalInput(text(f, 'to'), zone);
		if (from === null) errors.from = 'Give the start as a date and time.';
		if (to === null) errors.to = 'Give the end as a date and time.';
		body.golden = { from, to: to === null ? null : to + 59_999 };
	} else if (rule === 'lots' || rule === 'waferIds') {
		const { list, error } = await listFromForm(f, rule, `${rule}File`);
		if (error) errors[rule] = error;
		else if (list.length === 0) errors[rule] = rule === 'lots' ? 'Paste the lot ids or upload a file of them.' : 'Paste the wafer ids or upload a file of them.';
		body.golden = { [rule]: list };
	} else if (rule === 'afterWetClean') body.golden = { afterWetClean: { count: Number(text(f, 'count')) } };
	else errors.rule = 'Choose how the golden wafers are chosen.';
	const comps = text(f, 'components');
	body.components = comps === '' || comps === 'auto' ? 'auto' : Number(comps);
	return { body, errors };
}

export const actions: Actions = {
	create: async ({ request, locals }) => {
		const f = await request.formData();
		const values = Object.fromEntries([...f.entries()].filter(([, v]) => typeof v === 'string')) as Record<string, string>;
		const steps = f.getAll('steps').map(String);
		const { body, errors } = await bodyFromForm(f, safeZone(locals.user?.timeZone));
		if (Object.keys(errors).length) return fail(400, { errors, values, steps });
		let id: number;
		try {
			const req = await parseCampaignRequest(body);
			id = await createCampaign({ ...req, createdBy: locals.user!.id });
		} catch (e) {
			if (!(e instanceof QualificationError)) throw e;
			// the API's field names, mapped onto the form's
			const field = (e.field ?? 'form').replace(/^golden\.afterWetClean\.count$/, 'count').replace(/^golden\.(from|to)$/, '$1').replace(/^golden\.(lots|waferIds).*$/, '$1').replace(/^golden$/, 'rule').replace(/^step$/, 'steps');
			return fail(400, { errors: { [field]: e.message }, values, steps });
		}
		launchCampaign(id);
		redirect(303, `/qualifications/${id}`);
	}
};
