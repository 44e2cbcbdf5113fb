/**
 * Recipes, recipe steps, their feature catalogs and chambers as the ingest pipeline meets them. A file
 * is first read with read-only lookups (resolveStepPlan); whatever it creates (createPlannedStep,
 * registerChamber) is made inside its publishing transaction, so a refused file creates nothing.
 */
import type { Knex } from 'knex';
import { planActinometry } from '../../monitoring/actinometry.ts';
import type { FeatureColumn, Header } from './columns.ts';
import { now } from '../time.ts';

/** Tolerance for matching a file's OES channel to an actinometry line (issue 4: within 0.5 nm). */
export const ACTINOMETRY_TOLERANCE_NM = 0.5;

export interface DerivedSpec {
	name: string;
	/** vector position of the ratio */
	position: number;
	/** indices into Header.features */
	numerator: number;
	denominator: number;
}

/** How one recipe step's rows of this file become vectors. */
export interface StepPlan {
	recipeStepId: number;
	featureSetVersion: number;
	/** Header.features[i] goes to vector position positions[i] */
	positions: Int32Array;
	length: number;
	derived: DerivedSpec[];
	/** set when the file's feature columns differ from the step's set: every row of the step is refused */
	refusal: string | null;
	/** with a refusal: the file's columns that the step's set lacks, and the set's columns the file lacks */
	mismatch: { added: string[]; missing: string[] } | null;
	/** set while the step does not exist yet: `createPlannedStep` makes it when the file is published */
	toCreate?: { recipeCode: string; stepName: string };
}

export interface Created {
	recipes: string[];
	recipeSteps: string[];
	chambers: string[];
}

const id = (r: unknown): number => Number(typeof r === 'object' && r !== null ? (r as { id: number }).id : r);

/** The actinometry ratios a set of features supports, as indices into `features`. */
export function derivedFor(features: readonly Pick<FeatureColumn, 'name' | 'kind'>[]): Array<{ name: string; numerator: number; denominator: number }> {
	const oes = features.map((f, i) => ({ f, i })).filter((x) => x.f.kind === 'oes');
	const names = new Set(features.map((f) => f.name));
	const plan = planActinometry(oes.map((x) => x.f.name), ACTINOMETRY_TOLERANCE_NM);
	return plan.ratios
		.filter((r) => !names.has(r.name))
		.map((r) => ({ name: r.name, numerator: oes[r.numeratorIndex].i, denominator: oes[r.denominatorIndex].i }));
}

/**
 * Write a catalog version for a recipe step: the measured features in the given order, then the
 * actinometry ratios they support (derivedFor). Used for a step's first set and for an accepted new set.
 * @returns the number of catalog entries written
 */
export async function insertCatalog(
	trx: Knex.Transaction,
	recipeStepId: number,
	setVersion: number,
	features: readonly Omit<FeatureColumn, 'index'>[]
): Promise<number> {
	const F = features.length;
	const rows = [
		...features.map((f, position) => ({
			recipe_step_id: recipeStepId,
			set_version: setVersion,
			position,
			name: f.name,
			kind: f.kind,
			wavelength_nm: f.wavelengthNm,
			unit: f.unit
		})),
		...derivedFor(features).map((d, i) => ({
			recipe_step_id: recipeStepId,
			set_version: setVersion,
			position: F + i,
			name: d.name,
			kind: 'derived',
			wavelength_nm: null,
			unit: null
		}))
	];
	for (let i = 0; i < rows.length; i += 500) await trx('features').insert(rows.slice(i, i + 500));
	return rows.length;
}

/**
 * How this file's rows of one recipe step become vectors. Read-only: a step the fab does not have yet
 * gets a plan with a placeholder id (negative) and `toCreate`; `createPlannedStep` makes it inside the
 * file's publishing transaction, and only when at least one of its rows is stored — so a refused file
 * never leaves a catalog behind, and reading a file takes no write lock.
 */
export async function resolveStepPlan(
	k: Knex,
	header: Header,
	recipeCode: string,
	stepName: string,
	placeholderId: number
): Promise<StepPlan> {
	const recipe = await k('recipes').where({ code: recipeCode }).first('id');
	const step = recipe ? await k('recipe_steps').where({ recipe_id: recipe.id, name: stepName }).first('id', 'feature_set_version') : null;
	const derived = derivedFor(header.features);
	if (!step) {
		const F = header.features.length;
		return {
			recipeStepId: placeholderId,
			featureSetVersion: 1,
			positions: Int32Array.from(header.features.map((_, i) => i)),
			length: F + derived.length,
			derived: derived.map((d, i) => ({ ...d, position: F + i })),
			refusal: null,
			mismatch: null,
			toCreate: { recipeCode, stepName }
		};
	}
	const catalog: Array<{ position: number; name: string; kind: string }> = await k('features')
		.where({ recipe_step_id: step.id, set_version: step.feature_set_version })
		.orderBy('position')
		.select('position', 'name', 'kind');
	const measured = catalog.filter((c) => c.kind !== 'derived');
	const byName = new Map(measured.map((c) => [c.name, c.position]));
	const inFile = new Set(header.features.map((f) => f.name));
	const extra = header.features.filter((f) => !byName.has(f.name)).map((f) => f.name);
	const missing = measured.filter((c) => !inFile.has(c.name)).map((c) => c.name);
	const base = {
		recipeStepId: Number(step.id),
		featureSetVersion: Number(step.feature_set_version),
		length: catalog.length
	};
	if (extra.length || missing.length) {
		const list = (xs: string[]) => (xs.length > 8 ? `${xs.slice(0, 8).join(', ')} and ${xs.length - 8} more` : xs.join(', '));
		const parts = [];
		if (extra.length) parts.push(`not in the step's set: ${list(extra)}`);
		if (missing.length) parts.push(`missing from this file: ${list(missing)}`);
		return {
			...base,
			positions: new Int32Array(0),
			derived: [],
			mismatch: { added: extra, missing },
			refusal: `The feature columns differ from the set fixed for ${recipeCode} / ${stepName} (feature set ${step.feature_set_version}) — ${parts.join('; ')}. An engineer must accept a new feature set first (Uploads → Feature-set changes); until then these rows are refused.`
		};
	}
	const derivedPositions = new Map(catalog.filter((c) => c.kind === 'derived').map((c) => [c.name, c.position]));
	const plannedDerived = derived.filter((d) => derivedPositions.has(d.name));
	if (plannedDerived.length !== derivedPositions.size)
		throw new Error(`derived features of ${recipeCode} / ${stepName} cannot be rebuilt from the file's channels`);
	return {
		...base,
		positions: Int32Array.from(header.features.map((f) => byName.get(f.name)!)),
		derived: plannedDerived.map((d) => ({ ...d, position: derivedPositions.get(d.name)! })),
		refusal: null,
		mismatch: null
	};
}

/**
 * The catalog changed between reading a file and publishing it (another file created the same step, or
 * an engineer accepted a new feature set): the staged vectors may be laid out for the old set, so the
 * file is read again (pipeline.ts retries).
 */
export class CatalogChanged extends Error {
	constructor(what: string) {
		super(`the catalog changed while the file was read (${what}); read it again`);
		this.name = 'CatalogChanged';
	}
}

/** What a file created, by id, so that an interrupted publish can be undone (pipeline.ts). */
export interface CreatedIds {
	recipeIds: number[];
	recipeStepIds: number[];
	chamberIds: number[];
}

/** Make the recipe step (and its recipe) a plan stands for, inside the publishing transaction. */
export async function createPlannedStep(trx: Knex.Transaction, header: Header, plan: StepPlan, created: Created, ids: CreatedIds): Promise<void> {
	const want = plan.toCreate;
	if (!want) return;
	let recipe = await trx('recipes').where({ code: want.recipeCode }).first('id');
	if (!recipe) {
		const [r] = await trx('recipes').insert({ code: want.recipeCode, name: want.recipeCode }).returning('id');
		recipe = { id: id(r) };
		created.recipes.push(want.recipeCode);
		ids.recipeIds.push(recipe.id);
	}
	if (await trx('recipe_steps').where({ recipe_id: recipe.id, name: want.stepName }).first('id'))
		throw new CatalogChanged(`${want.recipeCode} / ${want.stepName} was created meanwhile`);
	const count = Number((await trx('recipe_steps').where({ recipe_id: recipe.id }).count({ n: '*' }).first())?.n ?? 0);
	const [s] = await trx('recipe_steps').insert({ recipe_id: recipe.id, name: want.stepName, position: count, feature_set_version: 1 }).returning('id');
	plan.recipeStepId = id(s);
	plan.toCreate = undefined;
	ids.recipeStepIds.push(plan.recipeStepId);
	await insertCatalog(trx, plan.recipeStepId, 1, header.features);
	created.recipeSteps.push(`${want.recipeCode} / ${want.stepName}`);
}

/**
 * Undo what an interrupted publish created, where nothing else came to use it: its recipe steps (with
 * their catalogs), then recipes left without steps, then chambers that hold no wafer-step.
 */
export async function undoCreated(trx: Knex.Transaction, ids: CreatedIds): Promise<void> {
	for (const stepId of ids.recipeStepIds) {
		if (await trx('wafer_steps').where({ recipe_step_id: stepId }).first('id')) continue;
		await trx('feature_set_proposals').where({ recipe_step_id: stepId }).delete();
		await trx('features').where({ recipe_step_id: stepId }).delete();
		await trx('recipe_steps').where({ id: stepId }).delete();
	}
	for (const recipeId of ids.recipeIds) if (!(await trx('recipe_steps').where({ recipe_id: recipeId }).first('id'))) await trx('recipes').where({ id: recipeId }).delete();
	for (const chamberId of ids.chamberIds) if (!(await trx('wafer_steps').where({ chamber_id: chamberId }).first('id'))) await trx('chambers').where({ id: chamberId }).delete();
}

// ── Chambers ──────────────────────────────────────────────────────────────────

/** The area and tool that chambers registered by ingest wait in until an admin assigns them. */
export const UNASSIGNED = { code: 'UNASSIGNED', name: 'Registered by ingest (assign a tool)' };

/** Register a chamber a file brought, under a placeholder area and tool an admin reassigns later. */
export async function registerChamber(trx: Knex.Transaction, code: string): Promise<number> {
	let area = await trx('areas').where({ code: UNASSIGNED.code }).first('id');
	if (!area) area = { id: id((await trx('areas').insert({ code: UNASSIGNED.code, name: UNASSIGNED.name }).returning('id'))[0]) };
	let tool = await trx('tools').where({ code: UNASSIGNED.code }).first('id');
	if (!tool)
		tool = { id: id((await trx('tools').insert({ code: UNASSIGNED.code, name: UNASSIGNED.name, area_id: area.id }).returning('id'))[0]) };
	const [c] = await trx('chambers').insert({ code, name: code, tool_id: tool.id, created_at: now() }).returning('id');
	return id(c);
}
