/**
 * Feature-set changes. A recipe step's feature set is fixed by the first file that brings it; a later
 * file with other feature columns has that step's rows refused, and its columns are recorded here (in
 * the file's transaction) as a proposal. An engineer accepts it — a new catalog version becomes the
 * step's set, so files with the new columns are stored and files with the old ones are refused — or
 * dismisses it, which changes nothing but the list.
 *
 * Wafers of a new set are stored as "no active baseline" until a baseline of that set is approved:
 * scoring compares a wafer's set version with the baseline's (scoring.ts).
 */
import { createHash } from 'node:crypto';
import type { Knex } from 'knex';
import { db } from '../db.ts';
import { now } from '../time.ts';
import { insertCatalog } from './catalog.ts';
import { classifyFeature, type FeatureColumn } from './columns.ts';

export type ProposalStatus = 'pending' | 'accepted' | 'dismissed' | 'superseded';

export interface FeatureSetProposal {
	id: number;
	status: ProposalStatus;
	recipeStepId: number;
	recipeCode: string;
	stepName: string;
	baseSetVersion: number;
	/** the step's set now; differs from baseSetVersion once another proposal was accepted */
	currentSetVersion: number;
	/** the proposed feature columns, in the first file's order */
	columns: string[];
	added: string[];
	missing: string[];
	file: { id: number; name: string };
	lastFile: { id: number; name: string };
	fileCount: number;
	rowsRefused: number;
	createdAt: number;
	decidedAt: number | null;
	decidedBy: string | null;
	acceptedSetVersion: number | null;
	/** chambers whose active baseline for this step is on another set than the proposed one would be */
	activeBaselines: Array<{ chamberCode: string; version: number; featureSetVersion: number }>;
	/** for a pending proposal: the set accepting it would put in force — an earlier set with exactly these columns, or a new one */
	outcome: { setVersion: number; reused: boolean } | null;
}

/** A proposal that cannot be accepted or dismissed (unknown, already decided, stale). */
export class FeatureSetError extends Error {}

const signatureOf = (names: readonly string[]) => createHash('sha256').update([...names].sort().join('\n')).digest('hex');

/**
 * Record that `fileId` had `rows` rows of a recipe step refused for their columns. Runs in the file's
 * transaction; a pending proposal with the same columns against the same set is counted on instead.
 */
export async function recordProposal(
	trx: Knex.Transaction,
	p: { fileId: number; recipeStepId: number; baseSetVersion: number; columns: string[]; added: string[]; missing: string[]; rows: number }
): Promise<number> {
	const signature = signatureOf(p.columns);
	const open = await trx('feature_set_proposals')
		.where({ recipe_step_id: p.recipeStepId, base_set_version: p.baseSetVersion, signature, status: 'pending' })
		.first('id');
	if (open) {
		await trx('feature_set_proposals')
			.where({ id: open.id })
			.update({ last_ingest_file_id: p.fileId, file_count: trx.raw('file_count + 1'), rows_refused: trx.raw('rows_refused + ?', [p.rows]) });
		return Number(open.id);
	}
	const [row] = await trx('feature_set_proposals')
		.insert({
			recipe_step_id: p.recipeStepId,
			base_set_version: p.baseSetVersion,
			columns_json: JSON.stringify(p.columns),
			signature,
			added_json: JSON.stringify(p.added),
			missing_json: JSON.stringify(p.missing),
			ingest_file_id: p.fileId,
			last_ingest_file_id: p.fileId,
			rows_refused: p.rows,
			status: 'pending',
			created_at: now()
		})
		.returning('id');
	return Number(typeof row === 'object' ? row.id : row);
}

/** Proposals, newest first: `pending` ones, or the decided history (`decided`), or those from one file. */
export async function listFeatureSetProposals(
	filter: { status: 'pending' | 'decided' } | { fileId: number },
	limit = 100,
	k: Knex = db()
): Promise<FeatureSetProposal[]> {
	const q = k('feature_set_proposals as p')
		.join('recipe_steps as rs', 'rs.id', 'p.recipe_step_id')
		.join('recipes as r', 'r.id', 'rs.recipe_id')
		.join('ingest_files as f', 'f.id', 'p.ingest_file_id')
		.join('ingest_files as lf', 'lf.id', 'p.last_ingest_file_id')
		.leftJoin('users as u', 'u.id', 'p.decided_by')
		.orderBy('p.id', 'desc')
		.limit(limit)
		.select('p.*', 'r.code as recipe_code', 'rs.name as step_name', 'rs.feature_set_version as current_version', 'f.original_name as file_name', 'lf.original_name as last_file_name', 'u.display_name as decided_by_name');
	if ('fileId' in filter) q.where((w) => w.where('p.ingest_file_id', filter.fileId).orWhere('p.last_ingest_file_id', filter.fileId));
	else if (filter.status === 'pending') q.where('p.status', 'pending');
	else q.whereNot('p.status', 'pending');
	const rows = await q;
	const steps = [...new Set(rows.filter((r) => r.status === 'pending').map((r) => Number(r.recipe_step_id)))];
	const active = steps.length
		? await k('baselines as b')
				.join('chambers as c', 'c.id', 'b.chamber_id')
				.whereIn('b.recipe_step_id', steps)
				.where({ 'b.status': 'active', 'b.scope': 'chamber' })
				.orderBy('c.code')
				.select('b.recipe_step_id', 'c.code', 'b.version', 'b.feature_set_version')
		: [];
	const outcomes = new Map<number, { setVersion: number; reused: boolean }>();
	for (const r of rows.filter((x) => x.status === 'pending')) {
		const o = await acceptOutcome(k, Number(r.recipe_step_id), Number(r.base_set_version), JSON.parse(r.columns_json));
		outcomes.set(Number(r.id), { setVersion: o.setVersion, reused: o.reused });
	}
	return rows.map((r) => ({
		outcome: outcomes.get(Number(r.id)) ?? null,
		id: Number(r.id),
		status: r.status,
		recipeStepId: Number(r.recipe_step_id),
		recipeCode: r.recipe_code,
		stepName: r.step_name,
		baseSetVersion: Number(r.base_set_version),
		currentSetVersion: Number(r.current_version),
		columns: JSON.parse(r.columns_json),
		added: JSON.parse(r.added_json),
		missing: JSON.parse(r.missing_json),
		file: { id: Number(r.ingest_file_id), name: r.file_name },
		lastFile: { id: Number(r.last_ingest_file_id), name: r.last_file_name },
		fileCount: Number(r.file_count),
		rowsRefused: Number(r.rows_refused),
		createdAt: Number(r.created_at),
		decidedAt: r.decided_at === null ? null : Number(r.decided_at),
		decidedBy: r.decided_by_name ?? null,
		acceptedSetVersion: r.accepted_set_version === null ? null : Number(r.accepted_set_version),
		activeBaselines: active
			.filter((b) => Number(b.recipe_step_id) === Number(r.recipe_step_id))
			.map((b) => ({ chamberCode: b.code, version: Number(b.version), featureSetVersion: Number(b.feature_set_version) }))
	}));
}

/** The pending proposal `id`, locked for a decision in `trx`, or a FeatureSetError saying why not. */
async function pendingProposal(trx: Knex.Transaction, id: number) {
	if (!Number.isInteger(id) || id < 1) throw new FeatureSetError('The proposal number is not valid; reload the page.');
	const p = await trx('feature_set_proposals').where({ id }).first();
	if (!p) throw new FeatureSetError(`There is no feature-set proposal #${id}.`);
	if (p.status !== 'pending') throw new FeatureSetError(`Proposal #${id} was already ${p.status}; nothing changed.`);
	const step = await trx('recipe_steps').where({ id: p.recipe_step_id }).first('feature_set_version');
	if (Number(step.feature_set_version) !== Number(p.base_set_version))
		throw new FeatureSetError(
			`Proposal #${id} was made against feature set ${p.base_set_version}, but the step is now on set ${step.feature_set_version}; send the file again to compare it with the current set.`
		);
	return p;
}

/**
 * The step's earlier set whose measured columns (derived ratios aside) are exactly `names`, if any:
 * a step that goes back to an older column list goes back to that set, so its wafers read with that
 * catalogue and score against that set's still-active baselines instead of waiting for new ones.
 */
async function matchingSet(trx: Knex, recipeStepId: number, names: string[]): Promise<{ setVersion: number; features: number } | null> {
	const rows: { set_version: number; name: string; kind: string }[] = await trx('features').where({ recipe_step_id: recipeStepId }).select('set_version', 'name', 'kind');
	const sets = new Map<number, { measured: Set<string>; features: number }>();
	for (const r of rows) {
		const v = Number(r.set_version);
		const s = sets.get(v) ?? { measured: new Set<string>(), features: 0 };
		s.features++;
		if (r.kind !== 'derived') s.measured.add(r.name);
		sets.set(v, s);
	}
	const wanted = new Set(names);
	const same = [...sets.entries()].filter(([, s]) => s.measured.size === wanted.size && [...wanted].every((n) => s.measured.has(n)));
	if (!same.length) return null;
	const [setVersion, s] = same.sort((a, b) => b[0] - a[0])[0]; // the newest such set
	return { setVersion, features: s.features };
}

/**
 * The set that accepting a proposal with measured columns `names` puts in force: the newest earlier set
 * with exactly those columns (`reused`, with its feature count), else a new version, highest so far + 1.
 */
async function acceptOutcome(k: Knex, recipeStepId: number, baseSetVersion: number, names: string[]): Promise<{ setVersion: number; reused: boolean; features: number | null }> {
	const earlier = await matchingSet(k, recipeStepId, names);
	if (earlier) return { setVersion: earlier.setVersion, reused: true, features: earlier.features };
	const top = await k('features').where({ recipe_step_id: recipeStepId }).max({ v: 'set_version' }).first();
	return { setVersion: Math.max(Number(top?.v ?? 0), baseSetVersion) + 1, reused: false, features: null };
}

/**
 * Accept a proposal, all or nothing: when an earlier set of the step has exactly the proposed measured
 * columns, return the step to that set (`reused`); otherwise write catalog version (highest so far + 1)
 * from the proposed columns with the same classification and derived ratios as a first file
 * (columns.ts, catalog.ts). Either way make it the step's set, record who accepted it and when, and
 * mark other pending proposals of the step superseded (they were measured against the old set).
 */
export async function acceptFeatureSet(
	proposalId: number,
	userId: string,
	k: Knex = db()
): Promise<{ recipeStepId: number; setVersion: number; features: number; reused: boolean }> {
	return k.transaction(async (trx) => {
		const p = await pendingProposal(trx, proposalId);
		const features: Omit<FeatureColumn, 'index'>[] = (JSON.parse(p.columns_json) as string[]).map((name) => {
			const c = classifyFeature(name);
			if ('error' in c) throw new FeatureSetError(`Column "${name}" ${c.error}; this proposal cannot become a feature set.`);
			return c;
		});
		const o = await acceptOutcome(trx, Number(p.recipe_step_id), Number(p.base_set_version), features.map((f) => f.name));
		const setVersion = o.setVersion;
		const n = o.reused ? o.features! : await insertCatalog(trx, Number(p.recipe_step_id), setVersion, features);
		const at = now();
		const moved = await trx('recipe_steps')
			.where({ id: p.recipe_step_id, feature_set_version: p.base_set_version })
			.update({ feature_set_version: setVersion });
		const decided = await trx('feature_set_proposals')
			.where({ id: p.id, status: 'pending' })
			.update({ status: 'accepted', decided_by: userId, decided_at: at, accepted_set_version: setVersion });
		if (moved !== 1 || decided !== 1) throw new FeatureSetError(`Proposal #${p.id} was decided by someone else meanwhile; reload the page.`);
		await trx('feature_set_proposals')
			.where({ recipe_step_id: p.recipe_step_id, status: 'pending' })
			.update({ status: 'superseded', decided_at: at });
		return { recipeStepId: Number(p.recipe_step_id), setVersion, features: n, reused: o.reused };
	});
}

/** Dismiss a proposal: the step keeps its set and the rows stay refused; a later file proposes again. */
export async function dismissFeatureSet(proposalId: number, userId: string, k: Knex = db()): Promise<void> {
	await k.transaction(async (trx) => {
		const p = await pendingProposal(trx, proposalId);
		await trx('feature_set_proposals').where({ id: p.id, status: 'pending' }).update({ status: 'dismissed', decided_by: userId, decided_at: now() });
	});
}
