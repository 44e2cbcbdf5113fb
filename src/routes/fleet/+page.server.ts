import { fail } from '@sveltejs/kit';
import { BaselineError } from '$lib/server/baselines';
import { buildFleetModel, runFleetMatching } from '$lib/server/fleet-matching';
import { hasRole } from '$lib/server/roles';
import { fleetSteps, keyLineMeans, latestRun, returnToProduction, stepChannelGrid } from '$lib/server/views/fleet-view';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ url, locals }) => {
	const steps = await fleetSteps();
	const asked = Number(url.searchParams.get('step'));
	const step = steps.find((s) => s.id === asked) ?? steps.find((s) => s.flagged > 0) ?? steps.find((s) => s.lastRunAt !== null) ?? steps[0] ?? null;
	if (!step) return { steps, step: null, run: null, lines: null, focus: null, check: null, grid: null, canAct: hasRole(locals.user?.role, 'engineer') };
	const run = await latestRun(step.id);
	const flagged = new Set(run.rows.filter((r) => r.flagged).map((r) => r.chamberCode));
	const focusCode = url.searchParams.get('chamber') ?? run.rows.find((r) => r.flagged)?.chamberCode ?? null;
	const checkCode = url.searchParams.get('check');
	return {
		steps,
		step,
		run,
		lines: await keyLineMeans(step.id, flagged),
		focus: run.rows.find((r) => r.chamberCode === focusCode) ?? null,
		check: checkCode ? ((await returnToProduction(checkCode, step.id)) ?? { missing: checkCode }) : null,
		grid: await stepChannelGrid(step.id),
		canAct: hasRole(locals.user?.role, 'engineer')
	};
};

const stepOf = (f: FormData) => {
	const n = Number(f.get('stepId'));
	return Number.isInteger(n) && n > 0 ? n : null;
};

export const actions: Actions = {
	run: async ({ request, locals }) => {
		const stepId = stepOf(await request.formData());
		if (stepId === null) return fail(400, { action: 'run', errors: { stepId: 'Choose a recipe step.' } });
		const r = await runFleetMatching(stepId, undefined, undefined, { trigger: 'manual', userId: locals.user?.id ?? null });
		if (r.skipped) return fail(400, { action: 'run', errors: { stepId: `Not run: ${r.skipped}.` } });
		return {
			action: 'run',
			message: `Matched ${r.chambers} chambers: ${r.flagged.length ? `${r.flagged.join(', ')} apart from the fleet` : 'all in family'}${r.alarmsOpened.length ? `; ${r.alarmsOpened.length} alarm${r.alarmsOpened.length > 1 ? 's' : ''} opened` : ''}.`
		};
	},
	model: async ({ request, locals }) => {
		const stepId = stepOf(await request.formData());
		if (stepId === null) return fail(400, { action: 'model', errors: { stepId: 'Choose a recipe step.' } });
		try {
			await buildFleetModel(stepId, locals.user!.id);
		} catch (e) {
			if (e instanceof BaselineError) return fail(400, { action: 'model', errors: { stepId: e.message } });
			throw e;
		}
		return { action: 'model', message: 'Fleet model rebuilt from the golden wafers of the approved chamber baselines.' };
	}
};
