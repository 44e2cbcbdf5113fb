/**
 * A campaign request, from the JSON API or the page's form, checked field by field and resolved to
 * recipe-step and chamber ids. Every refusal names the field and what is wrong.
 */
import type { Knex } from 'knex';
import { db } from './db.ts';
import { MAX_GOLDEN, MAX_LIST, type GoldenRule } from './golden-sets.ts';
import { QualificationError } from './qualifications.ts';

export interface CampaignRequest {
	recipeStepIds: number[];
	chamberIds: number[];
	rule: GoldenRule;
	components: number | 'auto';
}

const isObj = (v: unknown): v is Record<string, unknown> => typeof v === 'object' && v !== null && !Array.isArray(v);

function stringList(v: unknown, field: string): string[] {
	if (!Array.isArray(v) || v.length === 0) throw new QualificationError(`${field} must be a non-empty list of strings.`, field);
	if (v.length > MAX_LIST) throw new QualificationError(`${field} lists ${v.length} entries; at most ${MAX_LIST}.`, field);
	const out: string[] = [];
	v.forEach((x, i) => {
		if (typeof x !== 'string' || !x.trim()) throw new QualificationError(`${field}[${i}] must be a non-empty string.`, `${field}[${i}]`);
		if (x.length > 64) throw new QualificationError(`${field}[${i}] is longer than 64 characters.`, `${field}[${i}]`);
		out.push(x.trim());
	});
	return [...new Set(out)];
}

function time(v: unknown, field: string): number {
	const t = typeof v === 'number' ? v : typeof v === 'string' && /^\d{4}-\d{2}-\d{2}/.test(v) ? Date.parse(v) : NaN;
	if (!Number.isFinite(t)) throw new QualificationError(`${field} must be an ISO 8601 date-time (e.g. 2026-11-20T06:00:00Z) or epoch milliseconds.`, field);
	return t;
}

/** Check the `golden` object: exactly one of {from, to}, {lots}, {waferIds}, {afterWetClean: {count}}. */
export function parseGoldenRule(g: unknown): GoldenRule {
	if (!isObj(g)) throw new QualificationError('golden is required: {from, to}, {lots}, {waferIds} or {afterWetClean: {count}}.', 'golden');
	const kinds = ['from', 'lots', 'waferIds', 'afterWetClean'].filter((key) => key in g);
	if ('to' in g && !kinds.includes('from')) kinds.push('from');
	if (kinds.length !== 1) throw new QualificationError(`golden must give exactly one rule, got ${kinds.length ? kinds.join(' and ') : 'none'}: {from, to}, {lots}, {waferIds} or {afterWetClean: {count}}.`, 'golden');
	if (kinds[0] === 'from') {
		const from = time(g.from, 'golden.from');
		const to = time(g.to, 'golden.to');
		if (from >= to) throw new QualificationError('golden.from must come before golden.to.', 'golden.from');
		return { kind: 'range', from, to };
	}
	if (kinds[0] === 'lots') return { kind: 'lots', lots: stringList(g.lots, 'golden.lots') };
	if (kinds[0] === 'waferIds') return { kind: 'waferIds', waferIds: stringList(g.waferIds, 'golden.waferIds') };
	const a = g.afterWetClean;
	const count = isObj(a) ? a.count : undefined;
	if (typeof count !== 'number' || !Number.isInteger(count) || count < 10 || count > MAX_GOLDEN)
		throw new QualificationError(`golden.afterWetClean.count must be a whole number from 10 to ${MAX_GOLDEN}.`, 'golden.afterWetClean.count');
	return { kind: 'afterWetClean', count };
}

export function parseComponents(v: unknown): number | 'auto' {
	if (v === undefined || v === null || v === 'auto' || v === '') return 'auto';
	const n = typeof v === 'string' ? Number(v) : v;
	if (typeof n !== 'number' || !Number.isInteger(n) || n < 1 || n > 50) throw new QualificationError('components must be "auto" or a whole number from 1 to 50.', 'components');
	return n;
}

/**
 * Validate a POST /api/qualifications body (or the form's equivalent) and resolve names to ids.
 * Chambers: the listed codes, else those of `tool` or `area`, else every chamber that ran the step(s).
 */
export async function parseCampaignRequest(body: unknown, k: Knex = db()): Promise<CampaignRequest> {
	if (!isObj(body)) throw new QualificationError('The body must be a JSON object.', 'body');
	if (typeof body.recipe !== 'string' || !body.recipe.trim()) throw new QualificationError('recipe is required (a recipe code).', 'recipe');
	const recipe = await k('recipes').where({ code: body.recipe.trim() }).first('id');
	if (!recipe) throw new QualificationError(`No recipe "${body.recipe}".`, 'recipe');
	let stepNames: string[];
	if (body.steps !== undefined) stepNames = stringList(body.steps, 'steps');
	else if (typeof body.step === 'string' && body.step.trim()) stepNames = [body.step.trim()];
	else throw new QualificationError('step is required (a step name of the recipe), or steps: a list of them.', 'step');
	const steps = await k('recipe_steps').where({ recipe_id: recipe.id }).whereIn('name', stepNames).select('id', 'name');
	const missing = stepNames.filter((s) => !steps.some((r) => r.name === s));
	if (missing.length) throw new QualificationError(`Recipe ${body.recipe} has no step ${missing.map((m) => `"${m}"`).join(', ')}.`, body.steps !== undefined ? 'steps' : 'step');
	const recipeStepIds = stepNames.map((s) => steps.find((r) => r.name === s)!.id as number);
	let chamberIds: number[];
	if (body.chambers !== undefined) {
		const codes = stringList(body.chambers, 'chambers');
		const rows = await k('chambers').whereIn('code', codes).select('id', 'code');
		const unknown = codes.filter((c) => !rows.some((r) => r.code === c));
		if (unknown.length) throw new QualificationError(`Unknown chamber${unknown.length === 1 ? '' : 's'}: ${unknown.slice(0, 10).join(', ')}.`, 'chambers');
		chamberIds = codes.map((c) => rows.find((r) => r.code === c)!.id as number);
	} else {
		const q = k('wafer_steps as w').join('chambers as c', 'c.id', 'w.chamber_id').whereIn('w.recipe_step_id', recipeStepIds).distinct('c.id', 'c.code').orderBy('c.code');
		if (typeof body.tool === 'string' && body.tool) {
			const tool = await k('tools').where({ code: body.tool }).first('id');
			if (!tool) throw new QualificationError(`No tool "${body.tool}".`, 'tool');
			q.where('c.tool_id', tool.id);
		} else if (typeof body.area === 'string' && body.area) {
			const area = await k('areas').where({ code: body.area }).first('id');
			if (!area) throw new QualificationError(`No area "${body.area}".`, 'area');
			q.join('tools as t', 't.id', 'c.tool_id').where('t.area_id', area.id);
		}
		chamberIds = (await q).map((r) => r.id as number);
		if (chamberIds.length === 0) throw new QualificationError('No chamber in that choice has run this step yet.', 'chambers');
	}
	return { recipeStepIds, chamberIds, rule: parseGoldenRule(body.golden), components: parseComponents(body.components) };
}

export interface CampaignFormOptions {
	recipes: { code: string; steps: string[] }[];
	areas: { code: string; name: string }[];
	tools: { code: string; name: string; area: string }[];
}

/** What the new-campaign form offers: recipes with their steps, areas and tools. */
export async function campaignFormOptions(k: Knex = db()): Promise<CampaignFormOptions> {
	const steps = await k('recipe_steps as rs').join('recipes as r', 'r.id', 'rs.recipe_id').orderBy([{ column: 'r.code' }, { column: 'rs.position' }]).select('r.code', 'rs.name');
	const recipes: CampaignFormOptions['recipes'] = [];
	for (const s of steps) {
		const r = recipes.find((x) => x.code === s.code) ?? recipes[recipes.push({ code: s.code, steps: [] }) - 1];
		r.steps.push(s.name);
	}
	const areas = await k('areas').orderBy('code').select('code', 'name');
	const tools = await k('tools as t').join('areas as a', 'a.id', 't.area_id').orderBy('t.code').select('t.code', 't.name', 'a.code as area');
	return { recipes, areas, tools };
}

/** Split a pasted or uploaded list (lines, commas, semicolons, tabs or spaces) into entries. */
export function splitList(text: string): string[] {
	return text
		.split(/[\s,;]+/)
		.map((s) => s.trim())
		.filter(Boolean);
}

/** Largest uploaded list file (5,000 ids of 64 characters are ≈ 330 kB). */
export const MAX_LIST_FILE = 2 * 1024 * 1024;

/** A list from a form: the pasted text plus an uploaded text or CSV file, de-duplicated, checked. */
export async function listFromForm(f: FormData, textField: string, fileField: string): Promise<{ list: string[]; error: string | null }> {
	let list = splitList(String(f.get(textField) ?? ''));
	const file = f.get(fileField);
	if (file instanceof File && file.size > 0) {
		if (file.size > MAX_LIST_FILE) return { list, error: `${file.name} is larger than 2 MB; a golden list is at most ${MAX_LIST.toLocaleString('en')} entries.` };
		list = list.concat(splitList(await file.text()));
	}
	list = [...new Set(list)];
	if (list.length > MAX_LIST) return { list, error: `${list.length.toLocaleString('en')} entries; at most ${MAX_LIST.toLocaleString('en')}.` };
	return { list, error: null };
}
