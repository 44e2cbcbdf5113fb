import { error, fail } from '@sveltejs/kit';
import { approveBaseline, BaselineError, createDraftBaseline, discardDraft } from '$lib/server/baselines';
import { db } from '$lib/server/db';
import { clockZone } from '$lib/server/clock';
import { fromLocalInput, toLocalInput } from '$lib/components/display/format';
import { hasRole } from '$lib/server/roles';
import { rescoreSince } from '$lib/server/scoring';
import { runningTasks, startTask } from '$lib/server/tasks';
import { baselineWorkspace } from '$lib/server/views/baseline-view';
import { latestWetClean, MAX_GOLDEN, selectGolden, type GoldenRule, type GoldenSelection } from '$lib/server/golden-sets';
import { listFromForm } from '$lib/server/qualification-input';
import type { Actions, PageServerLoad, RequestEvent } from './$types';

const HOUR = 3_600_000;

async function workspaceOf(params: { chamber: string; step: string }) {
	const stepId = Number(params.step);
	if (!Number.isInteger(stepId) || stepId <= 0) error(404, `No recipe step "${params.step}".`);
	const ws = await baselineWorkspace(params.chamber, stepId);
	if (!ws) error(404, `No chamber ${params.chamber} with recipe step ${params.step}.`);
	return ws;
}

/** Wafers shown in the picker at most (ticked first, then the left-out ones). */
const MAX_SHOWN = 1500;
/** The default count of the after-wet-clean rule (a couple of lots' worth; common practice). */
const DEFAULT_AFTER_CLEAN = 60;

function shownSelection(sel: GoldenSelection) {
	const truncated = Math.max(0, sel.candidates.length - MAX_SHOWN);
	return { ...sel, candidates: truncated ? sel.candidates.slice(0, MAX_SHOWN) : sel.candidates, truncated };
}

export const load: PageServerLoad = async ({ params, url, locals, cookies }) => {
	const ws = await workspaceOf(params);
	const zone = clockZone(cookies, locals.user);
	const last = ws.range.last ?? Date.now();
	const wetCleanAt = await latestWetClean(ws.chamber.id);
	// Default golden rule: after the latest wet clean, the first in-control wafers past seasoning; with
	// no wet clean logged, the last week of wafers. Either way the candidates are screened robustly, so
	// a history loaded with its excursions does not get them ticked.
	const asked = url.searchParams.get('rule');
	const rangeAsked = url.searchParams.has('from') || url.searchParams.has('to');
	const ruleKind = asked === 'range' || asked === 'afterWetClean' ? asked : rangeAsked || wetCleanAt === null ? 'range' : 'afterWetClean';
	const from0 = ws.chamber.requalifySince ?? last - 7 * 24 * HOUR;
	const dflt = { from: from0, to: Math.max(last, from0 > last ? Date.now() : last) };
	const fromText = url.searchParams.get('from');
	const toText = url.searchParams.get('to');
	const rangeErrors: Record<string, string> = {};
	let from = dflt.from;
	let to = dflt.to;
	if (fromText) {
		const t = fromLocalInput(fromText, zone);
		if (t === null) rangeErrors.from = 'Not a date and time; showing the default range.';
		else from = t;
	}
	if (toText) {
		const t = fromLocalInput(toText, zone);
		if (t === null) rangeErrors.to = 'Not a date and time; showing the default range.';
		else to = t + 59_999; // the whole minute
	}
	if (from > to) {
		rangeErrors.from = '“From” is after “to”; showing the default range.';
		from = dflt.from;
		to = dflt.to;
	}
	const countText = url.searchParams.get('count');
	let count = DEFAULT_AFTER_CLEAN;
	if (countText) {
		const c = Number(countText);
		if (Number.isInteger(c) && c >= 10 && c <= MAX_GOLDEN) count = c;
		else rangeErrors.count = `Give a whole number from 10 to ${MAX_GOLDEN}; showing ${DEFAULT_AFTER_CLEAN}.`;
	}
	const rule: GoldenRule = ruleKind === 'afterWetClean' ? { kind: 'afterWetClean', count } : { kind: 'range', from, to };
	const selection = shownSelection(await selectGolden(ws.chamber.id, ws.step.id, rule));
	const tasks = runningTasks('rescore').filter((t) => t.label.startsWith(`${ws.chamber.code} · ${ws.step.recipeCode} ${ws.step.stepName}`));
	return {
		ws,
		rule: { kind: ruleKind, count, wetCleanAt, defaulted: asked === null && !rangeAsked },
		range: { from, to, fromInput: toLocalInput(from, zone), toInput: toLocalInput(to, zone), errors: rangeErrors },
		selection,
		selectedDraft: Number(url.searchParams.get('draft')) || ws.drafts[0]?.id || null,
		tasks,
		canAct: hasRole(locals.user?.role, 'engineer'),
		userId: locals.user?.id ?? null
	};
};

type Errors = Record<string, string>;
const text = (f: FormData, n: string) => String(f.get(n) ?? '').trim();

function startRescore(ws: Awaited<ReturnType<typeof workspaceOf>>, since: number, userId: string) {
	return startTask(
		{ kind: 'rescore', label: `${ws.chamber.code} · ${ws.step.recipeCode} ${ws.step.stepName} since ${new Date(since).toISOString()}`, createdBy: userId },
		async (ctx) => {
			const r = await rescoreSince(db(), { chamberId: ws.chamber.id, recipeStepId: ws.step.id, since, chunk: 250 }, (done, total) => ctx.progress(done, total));
			return { rescored: r.rescored };
		}
	);
}

function rescoreFrom(f: FormData, zone: string): { since: number | null; error?: string } {
	const raw = text(f, 'rescoreFrom');
	if (!raw) return { since: null, error: 'Give the time to rescore from.' };
	const since = fromLocalInput(raw, zone);
	return since === null ? { since: null, error: 'Not a date and time (e.g. 2026-11-20 06:00).' } : { since };
}

export const actions: Actions = {
	/** Candidates from a pasted or uploaded list of lots or wafer ids (too long for a link). */
	choose: async ({ request, params }: RequestEvent) => {
		const ws = await workspaceOf(params);
		const f = await request.formData();
		const kind = text(f, 'listKind') === 'lots' ? 'lots' : 'waferIds';
		const { list, error } = await listFromForm(f, 'list', 'listFile');
		if (error) return fail(400, { action: 'choose', errors: { list: error }, list: text(f, 'list'), listKind: kind });
		if (list.length === 0) return fail(400, { action: 'choose', errors: { list: kind === 'lots' ? 'Paste lot ids or upload a file of them.' : 'Paste wafer ids or upload a file of them.' }, list: '', listKind: kind });
		const rule: GoldenRule = kind === 'lots' ? { kind: 'lots', lots: list } : { kind: 'waferIds', waferIds: list };
		return { action: 'choose', selection: shownSelection(await selectGolden(ws.chamber.id, ws.step.id, rule)), list: list.join('\n'), listKind: kind };
	},
	draft: async ({ request, params, locals }: RequestEvent) => {
		const ws = await workspaceOf(params);
		const f = await request.formData();
		const values = { alpha: text(f, 'alpha'), components: text(f, 'components'), scaling: text(f, 'scaling'), note: text(f, 'note') };
		const errors: Errors = {};
		const ids = f.getAll('waferStepId').map((v) => Number(v));
		if (ids.some((n) => !Number.isInteger(n) || n <= 0)) errors.waferStepIds = 'The wafer selection is not valid; reload the page.';
		const alpha = Number(values.alpha);
		if (!(alpha > 0 && alpha < 0.5)) errors.alpha = 'α must lie between 0 and 0.5 (0.01 means one false alarm per hundred good wafers).';
		else if (alpha > ws.policy.warningAlpha) errors.alpha = `α must not exceed the warning α of the policy (${ws.policy.warningAlpha}).`;
		let components: number | 'auto' = 'auto';
		if (values.components && values.components !== 'auto') {
			const c = Number(values.components);
			if (!Number.isInteger(c) || c < 1 || c > Math.min(ids.length - 1, ws.step.features)) errors.components = `Give a whole number from 1 to ${Math.max(1, Math.min(ids.length - 1, ws.step.features))}, or “auto”.`;
			else components = c;
		}
		if (!['autoscale', 'pareto', 'none'].includes(values.scaling)) errors.scaling = 'Choose a scaling.';
		if (values.note.length > 500) errors.note = 'Keep the note under 500 characters.';
		if (Object.keys(errors).length) return fail(400, { action: 'draft', errors, values, ids });
		try {
			const d = await createDraftBaseline({
				chamberId: ws.chamber.id,
				recipeStepId: ws.step.id,
				waferStepIds: ids,
				alpha,
				components,
				scaling: values.scaling as 'autoscale',
				builtBy: locals.user!.id,
				note: values.note || undefined
			});
			return { action: 'draft', draftId: d.id, message: `Draft v${d.version} fitted on ${d.summary.n} wafers with ${d.summary.k} component${d.summary.k === 1 ? '' : 's'}. Review it below.` };
		} catch (e) {
			if (e instanceof BaselineError) return fail(400, { action: 'draft', errors: { [e.field ?? 'form']: e.message }, values, ids });
			throw e;
		}
	},
	approve: async ({ request, params, locals, cookies }: RequestEvent) => {
		const ws = await workspaceOf(params);
		const f = await request.formData();
		const id = Number(text(f, 'baselineId'));
		if (!ws.drafts.some((d) => d.id === id)) return fail(400, { action: 'approve', id, errors: { form: 'That draft is not under review here any more; reload the page.' } });
		const rescore = f.get('rescore') === 'on';
		let since: number | null = null;
		if (rescore) {
			const r = rescoreFrom(f, clockZone(cookies, locals.user));
			if (r.error) return fail(400, { action: 'approve', id, errors: { rescoreFrom: r.error } });
			since = r.since;
		}
		try {
			await approveBaseline(id, locals.user!.id);
		} catch (e) {
			if (e instanceof BaselineError) return fail(400, { action: 'approve', id, errors: { form: e.message } });
			throw e;
		}
		const task = since !== null ? startRescore(ws, since, locals.user!.id) : null;
		return { action: 'approve', id, taskId: task?.id ?? null, message: `v${ws.drafts.find((d) => d.id === id)!.version} is now the active baseline${ws.active ? `; v${ws.active.version} is retired` : ''}.` };
	},
	discard: async ({ request, params }: RequestEvent) => {
		const ws = await workspaceOf(params);
		const id = Number(text(await request.formData(), 'baselineId'));
		if (!ws.drafts.some((d) => d.id === id)) return fail(400, { action: 'discard', id, errors: { form: 'That draft is not under review here any more; reload the page.' } });
		try {
			await discardDraft(id);
		} catch (e) {
			if (e instanceof BaselineError) return fail(400, { action: 'discard', id, errors: { form: e.message } });
			throw e;
		}
		return { action: 'discard', id, message: 'Draft discarded.' };
	},
	rescore: async ({ request, params, locals, cookies }: RequestEvent) => {
		const ws = await workspaceOf(params);
		if (!ws.active) return fail(400, { action: 'rescore', errors: { form: 'There is no active baseline to rescore against.' } });
		const r = rescoreFrom(await request.formData(), clockZone(cookies, locals.user));
		if (r.error) return fail(400, { action: 'rescore', errors: { rescoreFrom: r.error } });
		const task = startRescore(ws, r.since!, locals.user!.id);
		return { action: 'rescore', taskId: task.id, message: 'Rescoring started.' };
	}
};
