import { fail } from '@sveltejs/kit';
import { AlarmPolicy, putSetting } from '$lib/server/settings';
import { MAINTENANCE_KINDS } from '$lib/server/maintenance';
import { policyFromForm, policyState } from '$lib/server/views/policy-view';
import { designRules } from '$lib/monitoring/alarm-rules';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async () => {
	const alarm = await policyState('alarm_policy');
	// What the budget makes of each rule, shown beside the setting.
	const d = designRules(AlarmPolicy.parse(alarm.value));
	return {
		alarm,
		alarmDesign: { grossScore: d.grossScore, warningProbability: d.warningProbability, driftArl: d.driftArl, driftL: d.driftL },
		baseline: await policyState('baseline_policy'),
		ingest: await policyState('ingest_policy'),
		maintenanceKinds: MAINTENANCE_KINDS
	};
};

export const actions: Actions = {
	alarm: async ({ request, locals }) => {
		const value = policyFromForm(await request.formData(), {
			booleans: ['singleEnabled', 'runEnabled', 'ewmaEnabled', 'fleetEnabled'],
			numbers: ['falseAlarmsPer10k', 'runK', 'runM', 'ewmaLambda', 'clearAfter', 'reopenFactor', 'fleetWindow']
		});
		if (typeof value.runK === 'number' && typeof value.runM === 'number' && value.runK > value.runM)
			return fail(400, { action: 'alarm', errors: { runK: 'k cannot be larger than m (k of the last m wafers).' }, values: value });
		const r = await putSetting('alarm_policy', value, locals.user!.id);
		if (!r.ok) return fail(400, { action: 'alarm', errors: r.errors, values: value });
		return { action: 'alarm', message: 'Alarm policy saved. It applies to wafers scored from now on.' };
	},
	baseline: async ({ request, locals }) => {
		const value = policyFromForm(await request.formData(), {
			booleans: ['fourEyes'],
			numbers: ['seasoningWafers', 'alpha', 'warningAlpha'],
			lists: ['requalifyOn']
		});
		if (typeof value.alpha === 'number' && typeof value.warningAlpha === 'number' && value.warningAlpha < value.alpha)
			return fail(400, {
				action: 'baseline',
				errors: { warningAlpha: 'The warning α must be at least the alarm α (a warning limit sits inside the alarm limit).' },
				values: value
			});
		const r = await putSetting('baseline_policy', value, locals.user!.id);
		if (!r.ok) return fail(400, { action: 'baseline', errors: r.errors, values: value });
		return { action: 'baseline', message: 'Baseline policy saved. New drafts use it; existing baselines keep their own α.' };
	},
	ingest: async ({ request, locals }) => {
		const value = policyFromForm(await request.formData(), { booleans: [], numbers: [], strings: ['unknownChamber'] });
		const r = await putSetting('ingest_policy', value, locals.user!.id);
		if (!r.ok) return fail(400, { action: 'ingest', errors: r.errors, values: value });
		return { action: 'ingest', message: 'Ingest policy saved.' };
	}
};
