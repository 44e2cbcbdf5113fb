/**
 * The wafer-step screen's data: its statistics against their limits, the contributions that drove
 * them (each OES channel named with its likely emission line), its spectrum against the golden band,
 * tool sensors as golden z-scores, actinometry ratios, the alarms it belongs to and its neighbours.
 * One wafer row, one score row and a cached model: fast enough for < 50 ms.
 */
import type { Knex } from 'knex';
import {
	actinometryRatios,
	ACTINOMETRY_RATIOS,
	channelGrid,
	contributionLimits,
	contributions,
	goldenZ,
	identifyFeature,
	leakGasOf,
	planActinometry,
	rankContributions,
	scoreWafer,
	t2ContributionsUninformative,
	waferLeakSignature,
	type ContributionKind,
	type LeakGas
} from '../../monitoring/index.ts';
import { DISPOSITIONS, RULE_LABELS, type AlarmRule } from '../alarms.ts';
import { getModel } from '../baselines.ts';
import { db } from '../db.ts';
import { decodeValues } from '../feature-values.ts';
import { getCatalog, type CatalogFeature } from '../wafer-steps.ts';
import { lastAcks, type AckSummary, type QueueAlarm } from './alarm-queue.ts';
const TOP = 15;
const HIGHLIGHT = 8;

export interface Contributor {
	feature: string;
	value: number;
	share: number;
	kind: CatalogFeature['kind'] | 'unknown';
	wavelengthNm: number | null;
	/** the likely emission line(s), nearest first (OES channels only) */
	lines: { species: string; element: string; wavelengthNm: number; note: string }[];
	/** the wafer's value in golden standard deviations from the golden mean (engine's goldenZ) */
	z: number;
	/** the gas a leak line points at (nitrogen features: air, He I: helium), null for other channels */
	leakGas: LeakGas | null;
	unit: string | null;
	/** its RBC control limit at the model's α (Alcala & Qin 2011), null for complete decomposition */
	limit: number | null;
	/** value beyond its limit: this feature's contribution is unlikely on an in-control wafer */
	significant: boolean;
}

/** An alarm as the wafer page lists it: the queue's fields it shows, with the latest acknowledgement. */
export type WaferAlarm = Pick<QueueAlarm, 'id' | 'ruleLabel' | 'state' | 'openedAt' | 'lastSeenAt' | 'waferCount' | 'worstRatio' | 'worstWaferStepId'> & {
	rule: string;
	severity: string;
	/** the latest acknowledgement (who, cause, when), for an alarm that is no longer open */
	acknowledgement: (AckSummary & { dispositionLabel: string | null }) | null;
};

export interface WaferView {
	id: number;
	waferId: string;
	lotId: string;
	slot: number | null;
	processedAt: number;
	golden: boolean;
	scoringState: string;
	chamber: { id: number; code: string };
	step: { id: number; recipeCode: string; name: string; key: string };
	baseline: { id: number; version: number; status: string } | null;
	stats: {
		t2: number;
		q: number;
		phi: number;
		t2Limit: number;
		qLimit: number;
		phiLimit: number;
		t2Warning: number;
		qWarning: number;
		phiWarning: number;
		state: 'ok' | 'warning' | 'alarm';
		k: number;
		alpha: number;
	} | null;
	contributions: {
		kind: ContributionKind;
		primary: 't2' | 'q';
		t2: Contributor[];
		q: Contributor[];
		/** why there is no T² ranking (k = 1), or null */
		t2Note: string | null;
		/** α of the contribution limits (the model's) */
		limitAlpha: number;
	} | null;
	spectrum: { wavelengthNm: number; feature: string; value: number; mean: number; sd: number; highlighted: boolean }[];
	sensors: { feature: string; unit: string | null; value: number; mean: number; sd: number; z: number }[];
	actinometry: { name: string; meaning: string; numerator: string; denominator: string; value: number; baseline: number; change: number }[];
	alarms: WaferAlarm[];
	previous: { id: number; waferId: string; processedAt: number } | null;
	next: { id: number; waferId: string; processedAt: number } | null;
	/**
	 * the leak-like signature by the engine's one rule (the alarm screens and mails use it too):
	 * gases, the risen leak-line channels and oxygen lines risen with an air signature
	 */
	leak: { gases: LeakGas[]; channels: string[]; supporting: string[] } | null;
}

const catalogs = new Map<string, CatalogFeature[]>();
async function catalogOf(recipeStepId: number, setVersion: number, k: Knex): Promise<CatalogFeature[]> {
	// A feature set never changes once stored (a change is a new set version), so it is cached.
	const key = `${recipeStepId}:${setVersion}`;
	let c = catalogs.get(key);
	if (!c) {
		c = await getCatalog(recipeStepId, setVersion, k);
		if (catalogs.size > 500) catalogs.clear();
		catalogs.set(key, c);
	}
	return c;
}

/**
 * Everything the wafer-step screen shows for one wafer-step.
 * @param id the wafer-step id
 * @param kind `rbc` (reconstruction-based, the default) or `complete` (complete decomposition)
 * @returns null when there is no such wafer-step
 */
export async function getWaferView(id: number, kind: 'rbc' | 'complete' = 'rbc', k: Knex = db()): Promise<WaferView | null> {
	const w = await k('wafer_steps as w')
		.join('chambers as c', 'c.id', 'w.chamber_id')
		.join('recipe_steps as s', 's.id', 'w.recipe_step_id')
		.join('recipes as r', 'r.id', 's.recipe_id')
		.where('w.id', id)
		.first('w.*', 'c.code as chamber_code', 's.name as step_name', 'r.code as recipe_code');
	if (!w) return null;
	const at = Number(w.processed_at);
	const x = decodeValues(w.feature_values);
	const catalog = await catalogOf(w.recipe_step_id, w.feature_set_version, k);
	const byName = new Map(catalog.map((f) => [f.name, f]));
	const score = await k('scores as sc').join('baselines as b', 'b.id', 'sc.baseline_id').where({ 'sc.wafer_step_id': id, 'sc.current': true }).first('sc.baseline_id', 'b.version', 'b.status', 'b.feature_set_version');

	const view: WaferView = {
		id: w.id,
		waferId: w.wafer_id,
		lotId: w.lot_id,
		slot: w.slot,
		processedAt: at,
		golden: Boolean(w.golden),
		scoringState: w.scoring_state,
		chamber: { id: w.chamber_id, code: w.chamber_code },
		step: { id: w.recipe_step_id, recipeCode: w.recipe_code, name: w.step_name, key: `${w.recipe_code}/${w.step_name}` },
		baseline: score ? { id: score.baseline_id, version: score.version, status: score.status } : null,
		stats: null,
		contributions: null,
		spectrum: [],
		sensors: [],
		actinometry: [],
		alarms: [],
		previous: null,
		next: null,
		leak: null
	};

	if (score && score.feature_set_version === w.feature_set_version) {
		const model = await getModel(score.baseline_id, k);
		const s = scoreWafer(model, x);
		view.stats = {
			t2: s.t2,
			q: s.q,
			phi: s.phi,
			t2Limit: s.t2Limit,
			qLimit: s.qLimit,
			phiLimit: s.phiLimit,
			t2Warning: s.t2WarningLimit,
			qWarning: s.qWarningLimit,
			phiWarning: s.phiWarningLimit,
			state: s.state,
			k: model.k,
			alpha: model.alpha
		};
		const index = new Map(model.featureNames.map((f, j) => [f, j]));
		const z = goldenZ(model, x);
		const zOf = (j: number) => z[j];
		// Name a channel after a line only within its cell of this step's channel grid.
		const grid = channelGrid(catalog.filter((f) => f.kind === 'oes').map((f) => f.wavelengthNm ?? f.name));
		const limits = contributionLimits(model);
		const describe = (stat: 't2' | 'q') => (r: { feature: string; value: number; share: number }): Contributor => {
			const j = index.get(r.feature)!;
			const f = byName.get(r.feature);
			const isOes = f?.kind === 'oes' || (f === undefined && /oes/i.test(r.feature));
			const name = f?.wavelengthNm != null ? `oes_${f.wavelengthNm}` : r.feature;
			// limits hold for reconstruction-based contributions only
			const limit = kind !== 'rbc' ? null : stat === 'q' ? limits.q[r.feature] : limits.t2;
			return {
				...r,
				kind: f?.kind ?? 'unknown',
				wavelengthNm: f?.wavelengthNm ?? null,
				lines: isOes ? identifyFeature(name, grid).slice(0, 2).map((l) => ({ species: l.species, element: l.element, wavelengthNm: l.wavelengthNm, note: l.note })) : [],
				z: zOf(j),
				leakGas: isOes ? leakGasOf(name, grid) : null,
				unit: f?.unit ?? null,
				limit,
				significant: limit !== null && r.value > limit
			};
		};
		const c = contributions(model, x, kind);
		const t2Note = t2ContributionsUninformative(model);
		// With k = 1 there is no T² ranking: the page shows Q's contributions and says why.
		const primary = s.qRatio >= s.t2Ratio || t2Note ? 'q' : 't2';
		view.contributions = {
			kind,
			primary,
			t2: c.t2 ? rankContributions(c.t2, TOP).map(describe('t2')) : [],
			q: rankContributions(c.q, TOP).map(describe('q')),
			t2Note,
			limitAlpha: limits.alpha
		};
		const lead = view.contributions[primary];
		// Mark only channels that carry a visible part of the statistic (≥ 2 %), at most eight.
		const highlighted = new Set(lead.slice(0, HIGHLIGHT).filter((r) => r.share >= 0.02).map((r) => r.feature));
		model.featureNames.forEach((name, j) => {
			const f = byName.get(name);
			if (f?.kind === 'oes' && f.wavelengthNm !== null)
				view.spectrum.push({ wavelengthNm: f.wavelengthNm, feature: name, value: x[j], mean: model.mean[j], sd: model.sd[j], highlighted: highlighted.has(name) });
			else if (f?.kind === 'sensor') view.sensors.push({ feature: name, unit: f.unit, value: x[j], mean: model.mean[j], sd: model.sd[j], z: zOf(j) });
		});
		view.spectrum.sort((a, b) => a.wavelengthNm - b.wavelengthNm);
		const plan = planActinometry(model.featureNames);
		if (plan.ratios.length) {
			try {
				const mine = actinometryRatios(plan, x);
				const golden = actinometryRatios(plan, model.mean);
				view.actinometry = plan.ratios.map((r) => ({
					name: r.name,
					meaning: ACTINOMETRY_RATIOS.find((a) => a.name === r.name)?.meaning ?? '',
					numerator: r.numeratorFeature,
					denominator: r.denominatorFeature,
					value: mine[r.name],
					baseline: golden[r.name],
					change: golden[r.name] !== 0 ? mine[r.name] / golden[r.name] - 1 : NaN
				}));
			} catch {
				view.actinometry = []; // an argon channel at zero: no ratio to show
			}
		}
		// Always from reconstruction-based Q contributions, whichever kind the screen shows, so the
		// wafer page says what the alarm queue and the mails say.
		const leak = waferLeakSignature(model, x);
		if (leak) view.leak = { gases: leak.gases, channels: leak.channels, supporting: leak.supporting };
	} else {
		catalog.forEach((f, j) => {
			if (f.kind === 'oes' && f.wavelengthNm !== null) view.spectrum.push({ wavelengthNm: f.wavelengthNm, feature: f.name, value: x[j], mean: NaN, sd: NaN, highlighted: false });
		});
		view.spectrum.sort((a, b) => a.wavelengthNm - b.wavelengthNm);
	}

	const alarms = await k('alarms')
		.where({ chamber_id: w.chamber_id, recipe_step_id: w.recipe_step_id })
		.andWhere((q) =>
			q
				.where((r) => r.where('opened_at', '<=', at).andWhere('last_seen_at', '>=', at))
				.orWhere('first_wafer_step_id', id)
				.orWhere('last_wafer_step_id', id)
				.orWhere('worst_wafer_step_id', id)
		)
		.orderBy('opened_at', 'desc')
		.select('id', 'rule', 'severity', 'state', 'opened_at', 'last_seen_at', 'wafer_count', 'worst_ratio', 'worst_wafer_step_id');
	const acks = await lastAcks(alarms.filter((a) => a.state !== 'open').map((a) => a.id), k);
	view.alarms = alarms.map((a) => {
		const ack = a.state === 'open' ? undefined : acks.get(a.id);
		return {
			id: a.id,
			rule: a.rule,
			ruleLabel: RULE_LABELS[a.rule as AlarmRule] ?? a.rule,
			severity: a.severity,
			state: a.state,
			openedAt: Number(a.opened_at),
			lastSeenAt: Number(a.last_seen_at),
			waferCount: a.wafer_count,
			worstRatio: a.worst_ratio,
			worstWaferStepId: a.worst_wafer_step_id,
			acknowledgement: ack ? { ...ack, dispositionLabel: ack.disposition ? (DISPOSITIONS[ack.disposition] ?? ack.disposition) : null } : null
		};
	});

	const neighbour = async (dir: 'prev' | 'next') => {
		const op = dir === 'prev' ? '<' : '>';
		const order = dir === 'prev' ? 'desc' : 'asc';
		const r = await k('wafer_steps')
			.where({ chamber_id: w.chamber_id, recipe_step_id: w.recipe_step_id })
			.andWhere((q) => q.where('processed_at', op, at).orWhere((e) => e.where('processed_at', at).andWhere('id', op, id)))
			.orderBy([{ column: 'processed_at', order }, { column: 'id', order }])
			.first('id', 'wafer_id', 'processed_at');
		return r ? { id: r.id, waferId: r.wafer_id, processedAt: Number(r.processed_at) } : null;
	};
	view.previous = await neighbour('prev');
	view.next = await neighbour('next');
	return view;
}
