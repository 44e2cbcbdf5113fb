import { fail } from '@sveltejs/kit';
import { clockZone } from '$lib/server/clock';
import { fromLocalInput } from '$lib/components/display/format';
import { getSetting } from '$lib/server/settings';
import { logMaintenance, MaintenanceError, MAINTENANCE_KINDS, type MaintenanceKind } from '$lib/server/maintenance';
import { hasRole } from '$lib/server/roles';
import { now } from '$lib/server/time';
import { chamberUpkeep, maintenanceLog } from '$lib/server/views/maintenance-view';
import type { Actions, PageServerLoad } from './$types';

const DAY = 86_400_000;

export const load: PageServerLoad = async ({ url, locals, cookies }) => {
	const zone = clockZone(cookies, locals.user);
	const sp = url.searchParams;
	const ignored: string[] = [];
	const kindRaw = sp.get('kind') ?? '';
	const kind = Object.hasOwn(MAINTENANCE_KINDS, kindRaw) ? (kindRaw as MaintenanceKind) : null;
	if (kindRaw && !kind) ignored.push('kind');
	const day = (name: string) => {
		const v = sp.get(name) ?? '';
		if (!v) return null;
		const t = fromLocalInput(`${v}T00:00`, zone);
		if (t === null) ignored.push(name);
		return t;
	};
	const from = day('from');
	const toDay = day('to');
	const chamber = (sp.get('chamber') ?? '').trim() || null;
	const [upkeep, log, policy] = await Promise.all([
		chamberUpkeep(),
		maintenanceLog({ chamber, kind, from, to: toDay === null ? null : toDay + DAY }),
		getSetting('baseline_policy')
	]);
	return {
		upkeep,
		log,
		filters: { chamber, kind, from: sp.get('from') ?? '', to: sp.get('to') ?? '' },
		ignored,
		kinds: MAINTENANCE_KINDS,
		requalifyOn: policy.requalifyOn as string[],
		canAct: hasRole(locals.user?.role, 'engineer'),
		now: now()
	};
};

export const actions: Actions = {
	log: async ({ request, locals, cookies }) => {
		const f = await request.formData();
		const zone = clockZone(cookies, locals.user);
		const values = {
			chamberId: String(f.get('chamberId') ?? ''),
			kind: String(f.get('kind') ?? ''),
			at: String(f.get('at') ?? ''),
			comment: String(f.get('comment') ?? '')
		};
		const errors: Record<string, string> = {};
		const chamberId = Number(values.chamberId);
		if (!Number.isInteger(chamberId) || chamberId <= 0) errors.chamberId = 'Choose the chamber.';
		if (!Object.hasOwn(MAINTENANCE_KINDS, values.kind)) errors.kind = 'Choose a kind of maintenance.';
		const at = fromLocalInput(values.at, zone);
		if (at === null) errors.at = `Give the date and time of the work (${zone}), e.g. 2026-11-20 14:30.`;
		if (Object.keys(errors).length) return fail(400, { action: 'log', errors, values });
		try {
			const r = await logMaintenance({ chamberId, kind: values.kind, at: at!, userId: locals.user!.id, comment: values.comment });
			return {
				action: 'log',
				message: r.requalify
					? `Logged. The chamber is now in requalify: scoring goes on, and it stays marked until new baselines are approved.`
					: 'Logged.'
			};
		} catch (e) {
			if (e instanceof MaintenanceError) return fail(400, { action: 'log', errors: { [e.field ?? 'form']: e.message }, values });
			throw e;
		}
	}
};
