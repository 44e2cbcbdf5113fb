import { fail } from '@sveltejs/kit';
import { acceptFeatureSet, dismissFeatureSet, FeatureSetError, listFeatureSetProposals } from '$lib/server/ingest/feature-sets';
import { hasRole } from '$lib/server/roles';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals }) => ({
	pending: await listFeatureSetProposals({ status: 'pending' }),
	decided: await listFeatureSetProposals({ status: 'decided' }, 25),
	// The hooks refuse the actions to viewers (route-policy.ts); this only hides the controls.
	canAct: hasRole(locals.user?.role, 'engineer')
});

const idOf = (f: FormData) => {
	const raw = String(f.get('proposalId') ?? '').trim();
	return /^\d{1,9}$/.test(raw) ? Number(raw) : null;
};

export const actions: Actions = {
	accept: async ({ request, locals }) => {
		const f = await request.formData();
		const id = idOf(f);
		if (id === null) return fail(400, { action: 'accept', id, ok: false, message: 'The proposal number is missing or not valid; reload the page.' });
		if (f.get('confirm') !== 'yes')
			return fail(400, { action: 'accept', id, ok: false, message: 'Tick the box to confirm that the step’s wafers go unscored until a baseline of the new set is approved.' });
		try {
			const r = await acceptFeatureSet(id, locals.user!.id);
			return {
				action: 'accept',
				id,
				ok: true,
				message: r.reused
					? `The step is back on its earlier feature set ${r.setVersion} (${r.features} features), which has exactly these columns. Send the refused file again to store its rows; chambers with an active baseline of set ${r.setVersion} score them right away, the others need one approved first.`
					: `Feature set ${r.setVersion} (${r.features} features) is now in force for this step. Send the refused file again to store its rows; each chamber needs new golden wafers and an approved baseline of set ${r.setVersion} before its wafers are scored.`
			};
		} catch (e) {
			if (e instanceof FeatureSetError) return fail(400, { action: 'accept', id, ok: false, message: e.message });
			throw e;
		}
	},
	dismiss: async ({ request, locals }) => {
		const id = idOf(await request.formData());
		if (id === null) return fail(400, { action: 'dismiss', id, ok: false, message: 'The proposal number is missing or not valid; reload the page.' });
		try {
			await dismissFeatureSet(id, locals.user!.id);
			return { action: 'dismiss', id, ok: true, message: `Proposal #${id} dismissed; the step keeps its feature set and those rows stay refused.` };
		} catch (e) {
			if (e instanceof FeatureSetError) return fail(400, { action: 'dismiss', id, ok: false, message: e.message });
			throw e;
		}
	}
};
