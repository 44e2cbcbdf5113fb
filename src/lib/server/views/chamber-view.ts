/**
 * The chamber screen's data: the chamber and the recipe steps it runs, its T²/Q ratio series with the
 * EWMA and a drift forecast, maintenance and baseline marks, its distance to the fleet over time.
 * The wafer table is in chamber-wafers.ts.
 */
import type { Knex } from 'knex';
import { forecastCrossing, type CrossingForecast } from '../../monitoring/index.ts';
import { designRules } from '../../monitoring/alarm-rules.ts';
import { driftChart, driftChartSd, scoreScale } from '../../monitoring/drift.ts';
import { ruleBaselineOf } from '../scoring.ts';
import type { EwmaReference } from '../baselines.ts';
import { db } from '../db.ts';
import { listChambers, type ChamberInfo } from '../fleet-structure.ts';
import { listMaintenance, MAINTENANCE_KINDS, rfHoursSinceWetClean } from '../maintenance.ts';
import { getSetting } from '../settings.ts';
import { listRecipeSteps } from './recipe-steps.ts';
import { INSTANT_MESSAGE, parseInstant } from './query-params.ts';

export interface ChamberStep {
	id: number;
	recipeCode: string;
	stepName: string;
	/** "RECIPE/step": the value of the `step` query parameter */
	key: string;
	waferSteps: number;
	lastProcessedAt: number | null;
	activeBaseline: { id: number; version: number; approvedAt: number | null } | null;
}

export interface ChamberHeader {
	chamber: ChamberInfo;
	steps: ChamberStep[];
	rfHoursSinceWetClean: number | null;
	lastWetCleanAt: number | null;
	latestDataAt: number | null;
}

/**
 * The chamber by code with the recipe steps it has run, its requalification state and its RF-hours
 * since the last wet clean (at the time of its latest data).
 * @returns null when no chamber has that code
 */
export async function getChamberHeader(code: string, k: Knex = db()): Promise<ChamberHeader | null> {
	const chamber = (await listChambers(k, { includeRetired: true })).find((c) => c.code === code);
	if (!chamber) return null;
	const all = await listRecipeSteps(k);
	const ran: { recipe_step_id: number; n: number | string; last: number | string | null }[] = await k('wafer_steps')
		.where({ chamber_id: chamber.id })
		.groupBy('recipe_step_id')
		.select('recipe_step_id', k.raw('count(*) as n'), k.raw('max(processed_at) as last'));
	const active = await k('baselines').where({ scope: 'chamber', chamber_id: chamber.id, status: 'active' }).select('id', 'recipe_step_id', 'version', 'approved_at');
	const steps: ChamberStep[] = all
		.filter((s) => ran.some((r) => r.recipe_step_id === s.id))
		.map((s) => {
			const r = ran.find((x) => x.recipe_step_id === s.id)!;
			const b = active.find((x) => x.recipe_step_id === s.id);
			return {
				id: s.id,
				recipeCode: s.recipeCode,
				stepName: s.stepName,
				key: `${s.recipeCode}/${s.stepName}`,
				waferSteps: Number(r.n),
				lastProcessedAt: r.last === null ? null : Number(r.last),
				activeBaseline: b ? { id: b.id, version: b.version, approvedAt: b.approved_at === null ? null : Number(b.approved_at) } : null
			};
		});
	const latestDataAt = steps.reduce<number | null>((m, s) => (s.lastProcessedAt !== null && (m === null || s.lastProcessedAt > m) ? s.lastProcessedAt : m), null);
	const clean = await k('maintenance_events').where({ chamber_id: chamber.id, kind: 'wet_clean' }).max({ at: 'at' }).first();
	return {
		chamber,
		steps,
		rfHoursSinceWetClean: latestDataAt === null ? null : await rfHoursSinceWetClean(chamber.id, latestDataAt, k),
		lastWetCleanAt: clean?.at == null ? null : Number(clean.at),
		latestDataAt
	};
}

/**
 * The step a `step` parameter names ("RECIPE/step"), else the one with the worst rollup in
 * [at, until) when given, else the chamber's first step.
 */
export async function pickStep(header: ChamberHeader, param: string | null, focus: { at: number; until: number } | null, k: Knex = db()): Promise<ChamberStep | null> {
	if (param) return header.steps.find((s) => s.key === param || String(s.id) === param) ?? null;
	if (focus && header.steps.length > 1) {
		const worst = await k('hourly_rollups')
			.where({ chamber_id: header.chamber.id })
			.andWhere('hour_at', '>=', Math.floor(focus.at / 3_600_000) * 3_600_000)
			.andWhere('hour_at', '<', focus.until)
			.orderBy('worst_ratio', 'desc')
			.first('recipe_step_id');
		const s = worst && header.steps.find((x) => x.id === worst.recipe_step_id);
		if (s) return s;
	}
	return header.steps[0] ?? null;
}

export interface SeriesForecast {
	stat: 'T²' | 'Q';
	/** as forecastCrossing: wafers until the EWMA crosses its limit on the fitted trend (0 = above now) */
	wafers: number | null;
	earliest: number | null;
	latest: number | null;
	confidence: number;
	/** median time between this chamber × step's recent wafers, to turn wafers into hours */
	msPerWafer: number;
	fromAt: number;
}

export interface ChamberSeries {
	from: number;
	to: number;
	/** wafer-steps in time order (current scores only) */
	ids: number[];
	at: number[];
	t2: number[];
	q: number[];
	baselineId: number[];
	/** EWMA of T²/limit and Q/limit, restarted at each baseline (NaN where the baseline has no reference) */
	ewmaT2: (number | null)[];
	ewmaQ: (number | null)[];
	ewmaT2Upper: (number | null)[];
	ewmaQUpper: (number | null)[];
	/**
	 * The EWMA's λ and L, and for the newest baseline segment the factor F its in-control variance was
	 * widened by for autocorrelated wafers (Zhang 1998; limits use σ√F); null where the baseline kept
	 * no ACF (older baselines: independent-wafer limits) or has no reference.
	 */
	ewma: {
		lambda: number;
		L: number;
		varianceFactor: { t2: number | null; q: number | null };
		/** where the newest segment's ACF came from, and the length of that series (null with no F) */
		acf: { source: 'consecutive' | 'golden'; n: number } | null;
	};
	forecasts: SeriesForecast[];
	baselines: { id: number; version: number; status: string; approvedAt: number | null; retiredAt: number | null; trainFrom: number | null; trainTo: number | null }[];
	maintenance: { id: number; at: number; kind: string; label: string; comment: string | null; by: string | null }[];
	fleet: { runAt: number; distance: number; modifiedZ: number; flagged: boolean }[];
	/** the modified-z threshold fleet matching flags at (Iglewicz & Hoaglin 1993) */
	fleetThreshold: number;
}

const WARMUP = 50; // EWMA memory before the range: (1 − 0.2)^50 ≈ 1e-5

/**
 * A chamber × recipe step's scores in [from, to] with their EWMA (warmed up on the 50 scores before
 * `from` under the same baseline), the forecast of an upward drift on the last baseline segment, and
 * the marks for the time axis.
 */
export async function getChamberSeries(q: { chamberId: number; recipeStepId: number; from: number; to: number }, k: Knex = db()): Promise<ChamberSeries> {
	const policy = await getSetting('alarm_policy', k);
	const cols = ['wafer_step_id', 'processed_at', 't2_ratio', 'q_ratio', 'baseline_id'];
	const base = () => k('scores').where({ chamber_id: q.chamberId, recipe_step_id: q.recipeStepId, current: true });
	const rows = await base().andWhere('processed_at', '>=', q.from).andWhere('processed_at', '<=', q.to).orderBy([{ column: 'processed_at' }, { column: 'wafer_step_id' }]).select(cols);
	const warm = rows.length
		? (await base().andWhere('processed_at', '<', q.from).andWhere('baseline_id', rows[0].baseline_id).orderBy('processed_at', 'desc').limit(WARMUP).select(cols)).reverse()
		: [];
	const baselineRows = await k('baselines')
		.where({ scope: 'chamber', chamber_id: q.chamberId, recipe_step_id: q.recipeStepId })
		.whereIn('status', ['active', 'retired'])
		.orderBy('version')
		.select('id', 'version', 'status', 'approved_at', 'retired_at', 'train_from', 'train_to', 'summary_json');
	const refs = new Map<number, EwmaReference | null>();
	for (const b of baselineRows) {
		try {
			refs.set(b.id, JSON.parse(b.summary_json).ewmaReference ?? null);
		} catch {
			refs.set(b.id, null);
		}
	}
	const alphas = new Map<number, { alpha: number; k: number }>();
	for (const b of await k('baselines').whereIn('id', baselineRows.map((b) => b.id)).select('id', 'alpha', 'k')) alphas.set(b.id, { alpha: Number(b.alpha), k: Number(b.k) });
	const design = designRules(policy);

	const all = [...warm, ...rows];
	const n = all.length;
	const ewmaT2 = new Array<number>(n).fill(NaN);
	const ewmaQ = new Array<number>(n).fill(NaN);
	const upT2 = new Array<number>(n).fill(NaN);
	const upQ = new Array<number>(n).fill(NaN);
	const forecasts: SeriesForecast[] = [];
	const varianceFactor: { t2: number | null; q: number | null } = { t2: null, q: null };
	let acf: ChamberSeries['ewma']['acf'] = null;
	// One EWMA per baseline segment: each baseline has its own in-control level.
	let s0 = 0;
	while (s0 < n) {
		let s1 = s0;
		while (s1 < n && all[s1].baseline_id === all[s0].baseline_id) s1++;
		const ref = refs.get(all[s0].baseline_id);
		const fit = alphas.get(all[s0].baseline_id);
		const rb = fit ? ruleBaselineOf(fit, ref ?? null) : null;
		const seg = all.slice(s0, s1);
		for (const [stat, field, out, up] of [
			['T²', 't2_ratio', ewmaT2, upT2],
			['Q', 'q_ratio', ewmaQ, upQ]
		] as const) {
			const key = stat === 'T²' ? 't2' : 'q';
			const m = ref?.[key];
			if (!rb?.drift || !m) continue;
			// The drift statistic the alarm rules use (EWMA of normal scores, alarm-rules.ts), drawn
			// back in ratio units so that it shares the chart's axis with the wafers (the map is monotone:
			// the line crosses its limit exactly when the rule fires).
			const scale = scoreScale(rb.shape[key]);
			const series = seg.map((r) => scale.score(r[field] as number));
			const { sd, inflation } = driftChartSd(m, ref?.n, policy.ewmaLambda);
			if (s1 === n) varianceFactor[key] = inflation?.factor ?? null;
			if (s1 === n && inflation && ref?.n) acf = { source: ref.acfSource ?? 'golden', n: ref.n };
			const chart = driftChart(series, { lambda: policy.ewmaLambda, L: design.driftL, sd });
			for (let i = 0; i < seg.length; i++) {
				out[s0 + i] = scale.ratio(chart.values[i]);
				up[s0 + i] = scale.ratio(chart.upper[i]);
			}
			// The forecast only for the newest segment, and only with enough wafers for a trend.
			if (s1 === n && seg.length >= 20) {
				const f: CrossingForecast = forecastCrossing(series, chart, { window: 30, confidence: 0.9, horizon: 5000 });
				if (f.wafers !== null && f.slope > 0) {
					const times = seg.slice(-31).map((r) => Number(r.processed_at));
					const gaps = times.slice(1).map((t, i) => t - times[i]).sort((a, b) => a - b);
					forecasts.push({
						stat,
						wafers: f.wafers,
						earliest: f.earliest,
						latest: f.latest,
						confidence: f.confidence,
						msPerWafer: gaps.length ? gaps[Math.floor(gaps.length / 2)] : 0,
						fromAt: Number(seg[seg.length - 1].processed_at)
					});
				}
			}
		}
		s0 = s1;
	}
	const w = warm.length;
	const maintenance = (await listMaintenance({ chamberId: q.chamberId, from: q.from, to: q.to, limit: 500 }, k)).reverse();
	const fleet = await k('fleet_matches')
		.where({ chamber_id: q.chamberId, recipe_step_id: q.recipeStepId })
		.andWhere('run_at', '>=', q.from)
		.andWhere('run_at', '<=', q.to)
		.orderBy('run_at')
		.select('run_at', 'distance', 'modified_z', 'flagged');
	return {
		from: q.from,
		to: q.to,
		ids: rows.map((r) => r.wafer_step_id),
		at: rows.map((r) => Number(r.processed_at)),
		t2: rows.map((r) => r.t2_ratio),
		q: rows.map((r) => r.q_ratio),
		baselineId: rows.map((r) => r.baseline_id),
		ewmaT2: finite(ewmaT2.slice(w)),
		ewmaQ: finite(ewmaQ.slice(w)),
		ewmaT2Upper: finite(upT2.slice(w)),
		ewmaQUpper: finite(upQ.slice(w)),
		ewma: { lambda: policy.ewmaLambda, L: Math.round(design.driftL * 100) / 100, varianceFactor, acf },
		forecasts,
		baselines: baselineRows.map((b) => ({
			id: b.id,
			version: b.version,
			status: b.status,
			approvedAt: b.approved_at === null ? null : Number(b.approved_at),
			retiredAt: b.retired_at === null ? null : Number(b.retired_at),
			trainFrom: b.train_from === null ? null : Number(b.train_from),
			trainTo: b.train_to === null ? null : Number(b.train_to)
		})),
		maintenance: maintenance.map((m) => ({ id: m.id, at: m.at, kind: m.kind, label: MAINTENANCE_KINDS[m.kind] ?? m.kind, comment: m.comment, by: m.userName })),
		fleet: fleet.map((f) => ({ runAt: Number(f.run_at), distance: f.distance, modifiedZ: f.modified_z, flagged: Boolean(f.flagged) })),
		fleetThreshold: 3.5
	};
}

/** NaN (no EWMA reference) becomes null, which is what JSON would make of it anyway. */
function finite(xs: number[]): (number | null)[] {
	return xs.map((v) => (Number.isFinite(v) ? v : null));
}

export const MAX_RANGE_MS = 92 * 86_400_000;

/**
 * The time range of the chamber screen from `from`, `to` (ISO 8601 or epoch ms) and the highlighted
 * bucket `at`…`until`: by default the 7 days up to the chamber's latest data. Ranges longer than 92
 * days are refused (the charts draw every wafer).
 */
export function parseChamberRange(
	sp: URLSearchParams,
	latestDataAt: number | null,
	now: number
): { ok: true; from: number; to: number; focus: { at: number; until: number } | null } | { ok: false; param: string; error: string } {
	const read = (name: string) => parseInstant(sp.get(name));
	const vals: Record<string, number | null> = {};
	for (const name of ['from', 'to', 'at', 'until']) {
		const v = read(name);
		if (v === 'bad') return { ok: false, param: name, error: `${name}: ${INSTANT_MESSAGE}` };
		vals[name] = v;
	}
	const to = vals.to ?? Math.min(now, latestDataAt ?? now) + 60_000;
	const from = vals.from ?? to - 7 * 86_400_000;
	if (from >= to) return { ok: false, param: 'from', error: 'from: must be before to' };
	if (to - from > MAX_RANGE_MS) return { ok: false, param: 'from', error: 'from: the range may span at most 92 days' };
	const focus = vals.at !== null ? { at: vals.at, until: vals.until ?? vals.at + 3_600_000 } : null;
	return { ok: true, from, to, focus };
}
