/**
 * Golden sets chosen the way engineers think — a time range, a list of lots, a list of wafer ids, or
 * the first N in-control wafers after the latest wet clean past seasoning — then screened robustly
 * (golden-screening.ts), since there is no baseline yet to tell an excursion from a good wafer.
 * Every wafer left out carries its reason, for the review.
 */
import type { Knex } from 'knex';
import { screenGoldenCandidates, SCREENING_METHOD } from '../monitoring/golden-screening.ts';
import { goldenCandidates, type GoldenCandidate } from './baselines.ts';
import { db } from './db.ts';
import { getSetting } from './settings.ts';
import { now } from './time.ts';
import { getCatalog, getWaferStepsByIds } from './wafer-steps.ts';

export type GoldenRule =
	| { kind: 'range'; from: number; to: number }
	| { kind: 'lots'; lots: string[] }
	| { kind: 'waferIds'; waferIds: string[] }
	| { kind: 'afterWetClean'; count: number };

/** Most entries of a lot or wafer-id list (a golden set, not a history). */
export const MAX_LIST = 5000;
/**
 * Most golden wafers a set keeps (the newest fair candidates): golden sets in fabs are 20–300 wafers,
 * and the screening's n × n decomposition stays under a second at this size.
 */
export const MAX_GOLDEN = 400;
/** Fewest golden wafers a draft needs (createDraftBaseline's own floor). */
export const MIN_GOLDEN = 10;
/** Below this many golden wafers the review warns that the limits rest on little data (common practice). */
export const FEW_GOLDEN = 20;

export interface ScreenedOut {
	waferStepId: number;
	waferId: string;
	reason: string;
}

export interface GoldenSelection {
	/** Every candidate the rule found, ticked ones first, each with why it is left out (or null). */
	candidates: (GoldenCandidate & { ticked: boolean })[];
	/** The wafer-step ids to fit on. */
	chosen: number[];
	screenedOut: ScreenedOut[];
	warnings: string[];
	/** Start of the golden window: rescoring after approval starts here. */
	goldenFrom: number | null;
	/** The latest wet clean the rule started from (afterWetClean). */
	wetCleanAt: number | null;
	method: string | null;
}

/** Describe a rule in a few words, for labels. */
export function describeRule(rule: GoldenRule): string {
	switch (rule.kind) {
		case 'range':
			return 'wafers of a time range'; // the times themselves are shown in each reader's clock
		case 'lots':
			return `${rule.lots.length} lot${rule.lots.length === 1 ? '' : 's'}`;
		case 'waferIds':
			return `${rule.waferIds.length} listed wafer${rule.waferIds.length === 1 ? '' : 's'}`;
		case 'afterWetClean':
			return `first ${rule.count} in-control wafers after the latest wet clean, past seasoning`;
	}
}

export async function latestWetClean(chamberId: number, k: Knex = db()): Promise<number | null> {
	const r = await k('maintenance_events').where({ chamber_id: chamberId, kind: 'wet_clean' }).andWhere('at', '<=', now()).max({ at: 'at' }).first();
	return r?.at == null ? null : Number(r.at);
}

/**
 * Resolve a golden rule on one chamber × recipe step, leave out the wafers the policy excludes
 * (open alarm, seasoning), screen the rest robustly and return what to fit on with every reason.
 */
export async function selectGolden(chamberId: number, recipeStepId: number, rule: GoldenRule, k: Knex = db()): Promise<GoldenSelection> {
	const warnings: string[] = [];
	let wetCleanAt: number | null = null;
	let found: GoldenCandidate[];
	const all = { chamberId, recipeStepId, from: 0, to: Number.MAX_SAFE_INTEGER };
	if (rule.kind === 'range') found = await goldenCandidates({ ...all, from: rule.from, to: rule.to }, k);
	else if (rule.kind === 'lots') found = await goldenCandidates({ ...all, lots: rule.lots }, k);
	else if (rule.kind === 'waferIds') found = await goldenCandidates({ ...all, waferIds: rule.waferIds }, k);
	else {
		wetCleanAt = await latestWetClean(chamberId, k);
		if (wetCleanAt === null) {
			return { candidates: [], chosen: [], screenedOut: [], warnings: ['No wet clean is logged for this chamber: log it on the maintenance page, or choose the golden wafers by time, lot or wafer id.'], goldenFrom: null, wetCleanAt, method: null };
		}
		const policy = await getSetting('baseline_policy', k);
		// Seasoning wafers plus the count asked for plus room for alarms and screening.
		const limit = policy.seasoningWafers + rule.count + Math.ceil(rule.count / 2) + 10;
		found = await goldenCandidates({ ...all, from: wetCleanAt + 1, limit }, k);
	}
	if (rule.kind === 'lots') {
		const seen = new Set(found.map((c) => c.lotId));
		const missing = rule.lots.filter((l) => !seen.has(l));
		if (missing.length) warnings.push(`${missing.length} listed lot${missing.length === 1 ? ' has' : 's have'} no wafer on this chamber × step: ${missing.slice(0, 5).join(', ')}${missing.length > 5 ? ', …' : ''}.`);
	}
	if (rule.kind === 'waferIds') {
		const seen = new Set(found.map((c) => c.waferId));
		const missing = rule.waferIds.filter((w) => !seen.has(w));
		if (missing.length) warnings.push(`${missing.length} listed wafer${missing.length === 1 ? ' was' : 's were'} not run on this chamber × step: ${missing.slice(0, 5).join(', ')}${missing.length > 5 ? ', …' : ''}.`);
	}
	let fair = found.filter((c) => c.excluded === null);
	const reasons = new Map<number, string>();
	if (fair.length > MAX_GOLDEN && rule.kind === 'afterWetClean') {
		for (const c of fair.slice(MAX_GOLDEN)) reasons.set(c.id, `beyond the first ${MAX_GOLDEN} fair candidates after the wet clean`);
		fair = fair.slice(0, MAX_GOLDEN);
	} else if (fair.length > MAX_GOLDEN) {
		for (const c of fair.slice(0, fair.length - MAX_GOLDEN)) reasons.set(c.id, `older than the newest ${MAX_GOLDEN} fair candidates (a golden set keeps at most ${MAX_GOLDEN}; narrow the choice to use these)`);
		fair = fair.slice(-MAX_GOLDEN);
	}
	const rows = await getWaferStepsByIds(fair.map((c) => c.id), k);
	// One feature set per baseline: keep the newest, say how many of an older set were left out.
	const newest = rows.reduce((m, r) => Math.max(m, r.featureSetVersion), 0);
	for (const r of rows) if (r.featureSetVersion !== newest) reasons.set(r.id, `older feature set (v${r.featureSetVersion}; the newest here is v${newest})`);
	const usable = rows.filter((r) => r.featureSetVersion === newest);
	let method: string | null = null;
	const screenedOut: ScreenedOut[] = [];
	if (usable.length >= 6) {
		const catalog = await getCatalog(recipeStepId, newest, k);
		const screen = screenGoldenCandidates(usable.map((r) => r.values), { featureNames: catalog.map((f) => f.name) });
		method = SCREENING_METHOD;
		for (const w of screen.wafers) {
			if (!w.excluded) continue;
			const r = usable[w.index];
			reasons.set(r.id, w.reason!);
			screenedOut.push({ waferStepId: r.id, waferId: r.waferId, reason: w.reason! });
		}
	} else if (usable.length > 0) warnings.push(`Only ${usable.length} fair candidates: too few to screen for outliers (at least 6).`);
	let chosen = usable.filter((r) => !reasons.has(r.id));
	if (rule.kind === 'afterWetClean') {
		const beyond = chosen.slice(rule.count);
		chosen = chosen.slice(0, rule.count);
		for (const r of beyond) reasons.set(r.id, `beyond the first ${rule.count} in-control wafers`);
		if (chosen.length < rule.count) warnings.push(`Only ${chosen.length} of the ${rule.count} wafers asked for are in control after the wet clean and its seasoning so far.`);
	}
	const chosenIds = new Set(chosen.map((r) => r.id));
	const candidates = found
		.map((c) => ({ ...c, excluded: c.excluded ?? reasons.get(c.id) ?? null, ticked: chosenIds.has(c.id) }))
		// ticked first (in time order), then the left-out ones with their reasons
		.sort((a, b) => Number(b.ticked) - Number(a.ticked) || a.processedAt - b.processedAt || a.id - b.id);
	warnings.push(...setWarnings(chosen, found.length, screenedOut.length));
	return {
		candidates,
		chosen: chosen.map((r) => r.id),
		screenedOut,
		warnings,
		goldenFrom: chosen.length ? chosen[0].processedAt : null,
		wetCleanAt,
		method
	};
}

/** What makes a golden set weak: few wafers, few lots, a short span, many screened out (issue of weak drafts passing silently). */
function setWarnings(chosen: { lotId: string; processedAt: number }[], found: number, screened: number): string[] {
	const w: string[] = [];
	if (chosen.length < MIN_GOLDEN) w.push(`Only ${chosen.length} golden wafers: a baseline needs at least ${MIN_GOLDEN}.`);
	else if (chosen.length < FEW_GOLDEN) w.push(`Only ${chosen.length} golden wafers (fewer than ${FEW_GOLDEN}): the limits rest on little data.`);
	const lots = new Set(chosen.map((c) => c.lotId)).size;
	if (chosen.length >= MIN_GOLDEN && lots < 3) w.push(`The golden wafers come from ${lots} lot${lots === 1 ? '' : 's'} only: lot-to-lot variation is not in the model.`);
	if (chosen.length >= 2) {
		const hours = (chosen[chosen.length - 1].processedAt - chosen[0].processedAt) / 3_600_000;
		if (chosen.length >= MIN_GOLDEN && hours < 8) w.push(`The golden wafers span ${hours.toFixed(1)} h only: slow variation over a shift is not in the model.`);
	}
	if (found > 0 && screened / found > 0.2) w.push(`${screened} of ${found} candidates were screened out: check the chamber was in control over the chosen wafers.`);
	return w;
}
