/**
 * Fleet matching on any installation. Per recipe step:
 * - the fleet model is built from the golden wafers of the APPROVED chamber baselines of that step
 *   (baseline_training_wafers of each active baseline — not wafer_steps.golden, which only records a
 *   choice), and is stale as soon as the set of active chamber baselines differs from the one it was
 *   built from (an approval or a retirement): the next run rebuilds it;
 * - each run (scheduled, on demand, or from the API) compares each chamber's last wafers with the
 *   others (monitoring/fleet.ts: fixed false-flag rate, FDR-controlled features) and records either
 *   the result or why it was skipped, so the screens can say "never run" or "skipped: …";
 * - a flagged chamber raises (or extends) a `fleet` alarm through the alarm lifecycle.
 */
import type { Knex } from 'knex';
import { compareChambers, fitFleetReference, FLEET_DEFAULTS, type FleetComparison, type FleetReference } from '../monitoring/index.ts';
import { clearEpisode, LIVE_STATES, raiseOrExtend } from './alarms.ts';
import { BaselineError, createDraftBaseline } from './baselines.ts';
import { db } from './db.ts';
import { decodeValues } from './feature-values.ts';
import { getSetting } from './settings.ts';
import { now } from './time.ts';

export type FleetTrigger = 'schedule' | 'manual' | 'api' | 'replay';

export interface FleetRunResult {
	recipeStepId: number;
	runId: number | null;
	/** Why nothing was compared (too few chambers, too few golden wafers, …), or absent. */
	skipped?: string;
	chambers: number;
	flagged: string[];
	alarmsOpened: number[];
	/** The fleet model was (re)built during this run. */
	rebuilt: boolean;
}

/** A chamber's recent wafers count only when the newest is at most this old at run time. */
export const FLEET_LOOKBACK_MS = 14 * 86_400_000;
/** Fewest recent wafers for a chamber to be compared (its mean is too noisy below). */
export const FLEET_MIN_RECENT = 5;
/** Most golden wafers read into the fleet's PCA model (evenly over the chambers; the reference uses all). */
const FLEET_PCA_MAX_WAFERS = 600;

interface SourceBaseline {
	id: number;
	chamberId: number;
	featureSetVersion: number;
}

/** The approved chamber baselines of a step on its current feature set. */
async function sourceBaselines(recipeStepId: number, k: Knex): Promise<{ version: number; baselines: SourceBaseline[] }> {
	const step = await k('recipe_steps').where({ id: recipeStepId }).first('feature_set_version');
	const version = Number(step?.feature_set_version ?? 1);
	const rows = await k('baselines')
		.where({ scope: 'chamber', recipe_step_id: recipeStepId, status: 'active', feature_set_version: version })
		.orderBy('id')
		.select('id', 'chamber_id', 'feature_set_version');
	return { version, baselines: rows.map((r) => ({ id: r.id, chamberId: r.chamber_id, featureSetVersion: r.feature_set_version })) };
}

export interface FleetModelState {
	fleetBaselineId: number | null;
	version: number | null;
	builtAt: number | null;
	chambers: number;
	goldenWafers: number;
	/** Approved chamber baselines changed since it was built (or it predates the recorded reference). */
	stale: boolean;
	/** Active chamber baselines of the step now. */
	approvedChambers: number;
}

/** The fleet model of a step and whether the next run will rebuild it. */
export async function fleetModelState(recipeStepId: number, k: Knex = db()): Promise<FleetModelState> {
	const { baselines } = await sourceBaselines(recipeStepId, k);
	const fleet = await k('baselines').where({ scope: 'fleet', recipe_step_id: recipeStepId, status: 'active' }).whereNull('chamber_id').first('id', 'version');
	const ref = fleet ? await k('fleet_references').where({ fleet_baseline_id: fleet.id }).first('source_baselines_json', 'chambers', 'golden_wafers', 'built_at') : null;
	const current = JSON.stringify(baselines.map((b) => b.id));
	return {
		fleetBaselineId: fleet?.id ?? null,
		version: fleet?.version ?? null,
		builtAt: ref ? Number(ref.built_at) : null,
		chambers: ref ? Number(ref.chambers) : 0,
		goldenWafers: ref ? Number(ref.golden_wafers) : 0,
		stale: !fleet || !ref || ref.source_baselines_json !== current,
		approvedChambers: baselines.length
	};
}

/**
 * Build (or rebuild) the fleet model of a step from the golden wafers of its approved chamber
 * baselines: the within/between reference of monitoring/fleet.ts (all golden wafers) and a pooled PCA
 * baseline (at most 600 golden wafers, evenly over the chambers) that the return-to-production check
 * scores against. The model is activated at once — it only restates baselines engineers approved.
 *
 * @throws BaselineError saying why when fewer than 3 chambers have an approved baseline with at least
 *   10 golden wafers on the step's current feature set
 */
export async function buildFleetModel(recipeStepId: number, userId: string | null, k: Knex = db()): Promise<number> {
	const { version, baselines } = await sourceBaselines(recipeStepId, k);
	const need = FLEET_DEFAULTS.minChambers;
	if (baselines.length < need)
		throw new BaselineError(`too few chambers: ${baselines.length} approved chamber baseline${baselines.length === 1 ? '' : 's'} on this step, ${need} needed`);
	const golden = await k('baseline_training_wafers as b')
		.join('wafer_steps as w', 'w.id', 'b.wafer_step_id')
		.whereIn('b.baseline_id', baselines.map((b) => b.id))
		.where('w.feature_set_version', version)
		.orderBy([{ column: 'w.processed_at' }, { column: 'w.id' }])
		.select('b.baseline_id', 'w.id', 'w.feature_values');
	const byBaseline = new Map<number, { id: number; values: Float64Array }[]>();
	for (const g of golden) {
		const list = byBaseline.get(g.baseline_id) ?? [];
		list.push({ id: g.id, values: decodeValues(g.feature_values) });
		byBaseline.set(g.baseline_id, list);
	}
	const enough = baselines.filter((b) => (byBaseline.get(b.id)?.length ?? 0) >= FLEET_DEFAULTS.minGolden);
	if (enough.length < need)
		throw new BaselineError(
			`too few golden wafers: ${enough.length} chamber${enough.length === 1 ? ' has' : 's have'} an approved baseline with ${FLEET_DEFAULTS.minGolden} or more golden wafers, ${need} needed`
		);
	const catalog = await k('features').where({ recipe_step_id: recipeStepId, set_version: version }).orderBy('position').pluck('name');
	const reference = fitFleetReference(
		enough.map((b) => ({ chamberId: String(b.chamberId), golden: byBaseline.get(b.id)!.map((w) => w.values) })),
		catalog
	);
	const perChamber = Math.max(2, Math.floor(FLEET_PCA_MAX_WAFERS / enough.length));
	const sample = enough.flatMap((b) => {
		const list = byBaseline.get(b.id)!;
		const step = Math.max(1, list.length / perChamber);
		return Array.from({ length: Math.min(perChamber, list.length) }, (_, i) => list[Math.floor(i * step)].id);
	});
	const draft = await createDraftBaseline(
		{
			scope: 'fleet',
			chamberId: null,
			recipeStepId,
			waferStepIds: sample,
			builtBy: userId,
			note: `Fleet model: golden wafers of the approved baselines of ${enough.length} chambers`
		},
		k
	);
	const t = now();
	await k.transaction(async (trx) => {
		await trx('baselines').where({ scope: 'fleet', recipe_step_id: recipeStepId, status: 'active' }).whereNull('chamber_id').update({ status: 'retired', retired_at: t });
		await trx('baselines').where({ id: draft.id }).update({ status: 'active', approved_by: userId, approved_at: t });
		await trx('fleet_references').insert({
			fleet_baseline_id: draft.id,
			recipe_step_id: recipeStepId,
			source_baselines_json: JSON.stringify(baselines.map((b) => b.id)),
			chambers: reference.chambers,
			golden_wafers: reference.goldenWafers,
			reference_json: JSON.stringify({
				...reference,
				withinVar: Array.from(reference.withinVar),
				betweenVar: Array.from(reference.betweenVar),
				blockVar: Array.from(reference.blockVar ?? [])
			}),
			built_at: t
		});
	});
	return draft.id;
}

async function loadReference(fleetBaselineId: number, k: Knex): Promise<FleetReference | null> {
	const row = await k('fleet_references').where({ fleet_baseline_id: fleetBaselineId }).first('reference_json');
	if (!row) return null;
	const r = JSON.parse(row.reference_json);
	return {
		...r,
		withinVar: Float64Array.from(r.withinVar),
		betweenVar: Float64Array.from(r.betweenVar),
		blockVar: r.blockVar?.length ? Float64Array.from(r.blockVar) : undefined
	};
}

async function recordSkip(recipeStepId: number, at: number, trigger: FleetTrigger, reason: string, k: Knex): Promise<number> {
	const [row] = await k('fleet_runs').insert({ recipe_step_id: recipeStepId, run_at: at, trigger, status: 'skipped', reason, created_at: now() }).returning('id');
	return typeof row === 'object' ? row.id : row;
}

/**
 * Run fleet matching for one recipe step at time `at`: rebuild the fleet model when stale, compare
 * the chambers, store the run (or the reason it was skipped) and raise `fleet` alarms.
 */
export async function runFleetMatching(
	recipeStepId: number,
	at: number = now(),
	k: Knex = db(),
	opts: { trigger?: FleetTrigger; userId?: string | null } = {}
): Promise<FleetRunResult> {
	const trigger = opts.trigger ?? 'schedule';
	const result: FleetRunResult = { recipeStepId, runId: null, chambers: 0, flagged: [], alarmsOpened: [], rebuilt: false };
	const skip = async (reason: string) => ({ ...result, skipped: reason, runId: await recordSkip(recipeStepId, at, trigger, reason, k) });
	const policy = await getSetting('alarm_policy', k);
	const state = await fleetModelState(recipeStepId, k);
	let fleetId = state.fleetBaselineId;
	if (state.stale) {
		try {
			fleetId = await buildFleetModel(recipeStepId, opts.userId ?? null, k);
			result.rebuilt = true;
		} catch (e) {
			if (e instanceof BaselineError) return skip(e.message);
			throw e;
		}
	}
	const fleet = await k('baselines').where({ id: fleetId! }).first('id', 'feature_set_version');
	const reference = await loadReference(fleet.id, k);
	if (!reference) return skip('the fleet model has no recorded reference; it is rebuilt on the next run');
	const window = policy.fleetWindow;
	// Every chamber in service; the per-chamber window query below (on the chamber × step × time index)
	// leaves out those that did not run the step lately. A DISTINCT over wafer_steps by step and time
	// has no index to use and scanned the whole table (≈ 1 s a step at 100,000 wafer-steps).
	const chambers = await k('chambers').whereNull('retired_at').orderBy('code').select('id', 'code');
	const windows: { id: number; code: string; rows: { id: number; processed_at: number; feature_values: Buffer }[] }[] = [];
	for (const c of chambers) {
		const rows = await k('wafer_steps')
			.where({ chamber_id: c.id, recipe_step_id: recipeStepId, feature_set_version: fleet.feature_set_version })
			.andWhere('processed_at', '<=', at)
			.andWhere('processed_at', '>', at - FLEET_LOOKBACK_MS)
			.orderBy([{ column: 'processed_at', order: 'desc' }, { column: 'id', order: 'desc' }])
			.limit(window)
			.select('id', 'processed_at', 'feature_values');
		if (rows.length >= FLEET_MIN_RECENT) windows.push({ id: c.id, code: c.code, rows: rows.reverse() });
	}
	if (windows.length < FLEET_DEFAULTS.minChambers)
		return skip(
			`too few chambers: ${windows.length} ran this step with ${FLEET_MIN_RECENT} or more wafers in the last ${FLEET_LOOKBACK_MS / 86_400_000} days, ${FLEET_DEFAULTS.minChambers} needed`
		);
	const cmp: FleetComparison = compareChambers(
		windows.map((w) => ({ chamberId: w.code, golden: [], recent: w.rows.map((r) => decodeValues(r.feature_values)) })),
		{ featureNames: reference.featureNames, reference, window }
	);
	result.chambers = cmp.chambers.length;
	await k.transaction(async (trx) => {
		const flaggedCount = cmp.chambers.filter((c) => c.flagged).length;
		const [run] = await trx('fleet_runs')
			.insert({ recipe_step_id: recipeStepId, run_at: at, trigger, status: 'ran', chambers: cmp.chambers.length, flagged: flaggedCount, fleet_baseline_id: fleet.id, alpha: cmp.alpha, threshold: cmp.threshold, created_at: now() })
			.returning('id');
		result.runId = typeof run === 'object' ? run.id : run;
		for (const m of cmp.chambers) {
			const w = windows.find((x) => x.code === m.chamberId)!;
			const last = w.rows[w.rows.length - 1];
			await trx('fleet_matches').insert({
				run_at: at,
				run_id: result.runId,
				recipe_step_id: recipeStepId,
				chamber_id: w.id,
				fleet_baseline_id: fleet.id,
				wafers: m.wafers,
				window_from: Number(w.rows[0].processed_at),
				window_to: Number(last.processed_at),
				last_wafer_step_id: last.id,
				distance: m.distance,
				modified_z: m.z,
				p_value: m.adjustedP,
				threshold: cmp.threshold,
				median_z: m.medianZ,
				flagged: m.flagged,
				separating_json: JSON.stringify(m.separatingFeatures)
			});
			if (!m.flagged) {
				// Back within the fleet: its fleet episode ends (wafers never clear a fleet alarm; a run does).
				const live = await trx('alarms').where({ chamber_id: w.id, recipe_step_id: recipeStepId, rule: 'fleet' }).whereIn('state', LIVE_STATES).first('id');
				if (live) await clearEpisode(trx, live.id, at, 'back within the fleet at the latest fleet match');
				continue;
			}
			result.flagged.push(m.chamberId);
			if (!policy.fleetEnabled) continue;
			const named = m.separatingFeatures.filter((f) => f.flagged);
			const r = await raiseOrExtend(trx, {
				leading: named.map((f) => f.feature),
				chamberId: w.id,
				recipeStepId,
				baselineId: fleet.id,
				rule: 'fleet',
				waferStepId: last.id,
				at: Number(last.processed_at),
				ratio: m.z / cmp.threshold,
				detail: {
					z: m.z,
					adjustedP: m.adjustedP,
					distance: m.distance,
					medianZ: m.medianZ,
					separating: named.map((f) => f.feature),
					separatingDetail: named.map((f) => ({ feature: f.feature, z: f.z, offsetSd: f.offsetSd, qValue: f.qValue }))
				}
			}, { reopenFactor: policy.reopenFactor });
			if (r.opened) result.alarmsOpened.push(r.id);
		}
	});
	return result;
}

/** Fleet matching over every recipe step (the scheduled job, and "run all" of the API). */
export async function runFleetMatchingAll(at: number = now(), k: Knex = db(), opts: { trigger?: FleetTrigger; userId?: string | null; stepIds?: number[] } = {}): Promise<FleetRunResult[]> {
	const steps = opts.stepIds ?? ((await k('recipe_steps').orderBy('id').pluck('id')) as number[]);
	const out: FleetRunResult[] = [];
	for (const id of steps) out.push(await runFleetMatching(id, at, k, opts));
	return out;
}
