/**
 * Replays the demo scenario in time order: one day of wafer-steps at a time, then that day's
 * maintenance, then what the engineers would do at the end of the day (golden marks, baselines,
 * fleet matching). See demo-seed.ts.
 */
import type { Knex } from 'knex';
import { generateWaferSteps, type DemoEpisode, type DemoScenario, type DemoWaferStep } from './demo/index.ts';
import { acknowledgeAlarms, closeAlarm } from '../src/lib/server/alarms.ts';
import { approveBaseline, createDraftBaseline } from '../src/lib/server/baselines.ts';
import { buildFleetModel, runFleetMatching } from '../src/lib/server/fleet-matching.ts';
import { logMaintenance } from '../src/lib/server/maintenance.ts';
import { rescoreSince } from '../src/lib/server/scoring.ts';
import { loadDemoDay, removeSpool } from './demo-load.ts';
import { setClock } from '../src/lib/server/time.ts';

export interface ReplayReport {
	waferSteps: number;
	files: number;
	baselines: number;
	fleetModels: number;
	alarms: number;
	acknowledged: number;
	maintenance: number;
	/** Wall-clock time of each part of the replay, ms (where the seed's time goes). */
	phases: Record<ReplayPhase, number>;
}

export type ReplayPhase = 'generate' | 'write CSV' | 'ingest and score' | 'golden marks' | 'baselines' | 'fleet' | 'review';

const DAY = 86_400_000;
/**
 * In the real-volume tail the engineers' loop (ingest, requalification, fleet matching) runs once a
 * shift, not once a day: at 20 wafers an hour a chamber cleaned in the morning must not wait until
 * midnight for its requalified baseline. The morning review stays daily.
 */
const SHIFT = 8 * 3_600_000;
/** Golden wafers needed before the first baseline of a chamber × step (enough for ~250 features' k). */
const FIRST_BASELINE_GOLDEN = 40;
/** Golden wafers (per recipe step) of a new clean cycle before the chamber is requalified with a rebuilt baseline. */
const REQUALIFY_GOLDEN = 8;
/** A rebuilt baseline uses the most recent golden wafers, across clean cycles, so it spans window clouding. */
const BASELINE_GOLDEN_MAX = 80;

export async function replayDemo(k: Knex, s: DemoScenario, log: (s: string) => void): Promise<ReplayReport> {
	const phases: Record<ReplayPhase, number> = { generate: 0, 'write CSV': 0, 'ingest and score': 0, 'golden marks': 0, baselines: 0, fleet: 0, review: 0 };
	const report: ReplayReport = { waferSteps: 0, files: 0, baselines: 0, fleetModels: 0, alarms: 0, acknowledged: 0, maintenance: 0, phases };
	const timed = async <T>(phase: ReplayPhase, f: () => Promise<T>): Promise<T> => {
		const t0 = performance.now();
		try {
			return await f();
		} finally {
			phases[phase] += performance.now() - t0;
		}
	};
	const users = new Map<string, string>((await k('users').select('id', 'username')).map((u) => [u.username, u.id]));
	const engineers = s.people.filter((p) => p.role === 'engineer').map((p) => users.get(p.username)!);
	const builder = engineers[0];
	const approver = engineers[1] ?? engineers[0];
	const chamberIds = new Map<string, number>((await k('chambers').select('id', 'code')).map((c) => [c.code, c.id]));
	const maintenance = [...s.maintenance].sort((a, b) => a.at.getTime() - b.at.getTime());
	let mIdx = 0;
	// Maintenance before the window (each chamber's last wet clean) is logged first.
	while (mIdx < maintenance.length && maintenance[mIdx].at.getTime() <= s.start.getTime()) {
		await logMaintenanceEvent(maintenance[mIdx++]);
	}
	const fleetBuilt = new Set<number>();
	const volumeFrom = s.realVolume ? s.realVolume.from.getTime() : Infinity;
	/** Periods end at each day's boundary in the compressed weeks and at each shift's in the real-volume tail. */
	const periodAfter = (t: number) => Math.min(t + (t >= volumeFrom ? SHIFT : DAY), s.end.getTime());
	let periodStart = s.start.getTime();
	let dayEnd = periodAfter(periodStart);
	let day: DemoWaferStep[] = [];

	async function logMaintenanceEvent(m: DemoScenario['maintenance'][number]) {
		await logMaintenance(
			{ chamberId: chamberIds.get(m.chamberCode)!, kind: m.kind, at: m.at.getTime(), userId: users.get(m.byUsername) ?? null, comment: m.comment },
			k
		);
		report.maintenance++;
	}

	async function endOfDay(until: number) {
		setClock(until); // what happens now happens at the demo's time
		// The technicians log the day's cleans as they happen, so wafers after a clean are seen as
		// seasoning when they are scored.
		while (mIdx < maintenance.length && maintenance[mIdx].at.getTime() <= until) await logMaintenanceEvent(maintenance[mIdx++]);
		const from = new Date(periodStart).toISOString();
		const label = until - periodStart < DAY ? `${from.slice(0, 10)}_${from.slice(11, 13)}00` : from.slice(0, 10);
		const loaded = await loadDemoDay(k, s, day, label, null);
		phases['write CSV'] += loaded.ms.csv;
		phases['ingest and score'] += loaded.ms.ingest;
		phases['golden marks'] += loaded.ms.golden;
		report.waferSteps += loaded.waferSteps;
		report.files += loaded.files;
		day = [];
		await engineersAtWork(until);
		// The morning review of the day before; the demo's last two days are left for the user.
		const dayBoundary = (until - s.start.getTime()) % DAY === 0;
		if (dayBoundary && until <= s.end.getTime() - 2 * DAY) await timed('review', () => reviewAlarms(k, s, engineers, until - DAY / 2, report));
	}

	/** What the module engineers do at the end of a day: baselines where due, fleet models, matching. */
	async function engineersAtWork(until: number) {
		await timed('baselines', () => baselinesDue());
		// Fleet matching once a day, as the morning check (matching at every shift of the tail cost
		// ≈ 1 s per recipe step over a real-volume window, a third of the seed's time, for nothing new).
		if ((until - s.start.getTime()) % DAY === 0 || until === s.end.getTime()) await timed('fleet', () => fleetWork(until));
	}

	/** Baselines where due: a first one once enough golden wafers, a rebuilt one after each wet clean. */
	async function baselinesDue() {
		const pairs = await k('wafer_steps').distinct('chamber_id', 'recipe_step_id');
		for (const { chamber_id: chamberId, recipe_step_id: stepId } of pairs) {
			const active = await k('baselines').where({ scope: 'chamber', chamber_id: chamberId, recipe_step_id: stepId, status: 'active' }).first('approved_at');
			const ch = await k('chambers').where({ id: chamberId }).first('requalify_since');
			const golden = k('wafer_steps').where({ chamber_id: chamberId, recipe_step_id: stepId, golden: true });
			let due = false;
			if (!active) due = Number((await golden.clone().count({ n: '*' }).first())?.n ?? 0) >= FIRST_BASELINE_GOLDEN;
			else if (ch?.requalify_since && Number(active.approved_at) < Number(ch.requalify_since)) {
				const fresh = Number((await golden.clone().andWhere('processed_at', '>', Number(ch.requalify_since)).count({ n: '*' }).first())?.n ?? 0);
				due = fresh >= REQUALIFY_GOLDEN;
			}
			if (!due) continue;
			const ids = (await golden.clone().orderBy('processed_at', 'desc').limit(BASELINE_GOLDEN_MAX).pluck('id')) as number[];
			const draft = await createDraftBaseline(
				{ chamberId, recipeStepId: stepId, waferStepIds: ids, builtBy: builder, note: active ? 'Requalification after wet clean' : 'First baseline' },
				k
			);
			await approveBaseline(draft.id, approver, k);
			report.baselines++;
			if (!active) await rescoreSince(k, { chamberId, recipeStepId: stepId, since: s.start.getTime() });
		}
	}

	async function fleetWork(until: number) {
		// Fleet models once every chamber of a step has its own baseline; then match each day.
		const steps = await k('recipe_steps').pluck('id');
		for (const stepId of steps as number[]) {
			if (!fleetBuilt.has(stepId)) {
				const running = await k('wafer_steps').where({ recipe_step_id: stepId }).countDistinct({ n: 'chamber_id' }).first();
				const based = await k('baselines').where({ scope: 'chamber', recipe_step_id: stepId, status: 'active' }).countDistinct({ n: 'chamber_id' }).first();
				if (Number(running?.n ?? 0) >= 3 && Number(running?.n) === Number(based?.n)) {
					await buildFleetModel(stepId, approver, k);
					fleetBuilt.add(stepId);
					report.fleetModels++;
				}
			}
			if (fleetBuilt.has(stepId)) await runFleetMatching(stepId, until, k);
		}
	}

	const rows = generateWaferSteps(s);
	for (;;) {
		const g0 = performance.now();
		const next = rows.next();
		phases.generate += performance.now() - g0;
		if (next.done) break;
		const row = next.value;
		const t = row.processedAt.getTime();
		while (t >= dayEnd) {
			await endOfDay(dayEnd);
			const what = dayEnd - periodStart < DAY ? `shift ending ${new Date(dayEnd).toISOString().slice(0, 16)}Z` : `day ${new Date(periodStart).toISOString().slice(0, 10)}`;
			log(`  ${what} loaded (${report.waferSteps.toLocaleString('en')} wafer-steps so far)`);
			periodStart = dayEnd;
			dayEnd = periodAfter(dayEnd);
		}
		day.push(row);
	}
	await endOfDay(s.end.getTime());
	while (mIdx < maintenance.length) await logMaintenanceEvent(maintenance[mIdx++]);
	setClock(null);
	removeSpool();
	report.alarms = Number((await k('alarms').count({ n: '*' }).first())?.n ?? 0);
	return report;
}

/** The episode an alarm overlaps (on its chamber, between its opening and its last wafer), if any: the review's first test. */
export function episodeOfAlarm(s: DemoScenario, a: { code: string; opened_at: number; last_seen_at: number }): DemoEpisode | undefined {
	return s.episodes.find((e) => e.chamberCode === a.code && Number(a.last_seen_at) >= e.start.getTime() && (!e.end || Number(a.opened_at) <= e.end.getTime()));
}

/** The cause code the daily review gives an alarm of each episode (the air leak's is left for the morning's user). */
export const EPISODE_CAUSE: Readonly<Record<string, string>> = {
	o2_mfc_drift: 'HW-MFC',
	he_backside_leak: 'HW-HE',
	rf_match_wear: 'HW-RFM',
	part_swap_offset: 'HW-SWAP',
	air_leak: 'HW-LEAK'
};

/**
 * The review's judge, as one function so the seed's figures (demo-figures.ts) judge every alarm as
 * the review does: an alarm overlapping an episode gets that episode's cause, one opened within a day
 * after a wet clean on its chamber is seasoning, every other one a statistical false alarm.
 */
export function judgeAlarm(s: DemoScenario, a: { code: string; opened_at: number; last_seen_at: number }, cleanWithinDayBefore: boolean): string {
	const ep = episodeOfAlarm(s, a);
	if (ep) return EPISODE_CAUSE[ep.kind] ?? 'OTH';
	return cleanWithinDayBefore ? 'PRC-SEAS' : 'FA-LIMIT';
}

/**
 * The engineers' daily review: open alarms opened before `before` are acknowledged. Cause codes follow
 * the episodes the engineers came to know; anything else within a day of a wet clean was seasoning,
 * the rest false alarms (closed). Alarms of an ongoing episode stay acknowledged and go on being
 * extended; they are closed once the episode is over.
 */
async function reviewAlarms(k: Knex, s: DemoScenario, engineers: string[], before: number, report: ReplayReport) {
	const episodeOf = (a: { code: string; opened_at: number; last_seen_at: number }) => episodeOfAlarm(s, a);
	const acknowledged = await k('alarms as a')
		.join('chambers as c', 'c.id', 'a.chamber_id')
		.where('a.state', 'acknowledged')
		.select('a.id', 'a.opened_at', 'a.last_seen_at', 'c.code');
	for (const a of acknowledged) {
		const ep = episodeOf(a);
		if (!ep || (ep.end && ep.end.getTime() < before))
			await closeAlarm(k, { alarmId: a.id, userId: engineers[0], comment: ep ? 'Cause removed; back in family.' : 'Back in family.' });
	}
	const alarms = await k('alarms as a')
		.join('chambers as c', 'c.id', 'a.chamber_id')
		.where('a.opened_at', '<', before)
		// Alarms end by themselves (cleared) after a run of in-control wafers; the review still gives
		// each one not yet acknowledged its cause, so the queue's history says what every episode was.
		.where((w) => w.where('a.state', 'open').orWhere((x) => x.where('a.state', 'cleared').whereNull('a.acknowledged_at')))
		.orderBy('a.opened_at')
		.select('a.id', 'a.rule', 'a.opened_at', 'a.last_seen_at', 'c.code', 'a.chamber_id');
	let i = 0;
	for (const a of alarms) {
		const ep = episodeOf(a);
		if (ep?.kind === 'air_leak') continue; // nobody has looked at it yet: the morning's main story
		const clean = await k('maintenance_events')
			.where({ chamber_id: a.chamber_id, kind: 'wet_clean' })
			.andWhere('at', '<=', Number(a.opened_at))
			.andWhere('at', '>', Number(a.opened_at) - DAY)
			.first('id');
		const user = engineers[i++ % engineers.length];
		if (ep?.kind === 'o2_mfc_drift') {
			await acknowledgeAlarms(k, { alarmIds: [a.id], userId: user, causeCode: 'HW-MFC', disposition: 'continue', comment: 'O lines up against Ar with O2 flow at setpoint: MFC calibration check requested, etch rate still in spec.' });
			report.acknowledged++;
			continue; // the drift goes on: left acknowledged, not closed
		}
		if (ep?.kind === 'he_backside_leak') {
			await acknowledgeAlarms(k, { alarmIds: [a.id], userId: user, causeCode: 'HW-HE', disposition: 'hold_recommended', comment: 'He lines in OES and backside He flow up: chuck seal suspected, PM requested.' });
			report.acknowledged++;
			continue;
		}
		if (ep?.kind === 'rf_match_wear') {
			await acknowledgeAlarms(k, { alarmIds: [a.id], userId: user, causeCode: 'HW-RFM', disposition: 'continue', comment: 'Reflected power creeping up, DC bias smaller, lines down together: RF match service requested, running while reflected power stays in spec.' });
			report.acknowledged++;
			continue; // the wear goes on: left acknowledged, not closed
		}
		if (ep?.kind === 'part_swap_offset') {
			await acknowledgeAlarms(k, { alarmIds: [a.id], userId: user, causeCode: 'HW-SWAP', disposition: 'requalify', comment: 'Focus ring swapped; chamber sits apart from the fleet on Cl and H lines. Matching follow-up opened.' });
			report.acknowledged++;
			continue;
		}
		const cause = judgeAlarm(s, a, !!clean);
		const comment = clean ? 'Within a day of the wet clean: walls still seasoning.' : 'Single excursion, neighbours in family, no physical cause found.';
		await acknowledgeAlarms(k, { alarmIds: [a.id], userId: user, causeCode: cause, disposition: 'continue', comment });
		await closeAlarm(k, { alarmId: a.id, userId: user, comment: 'Back in family.' });
		report.acknowledged++;
	}
}
