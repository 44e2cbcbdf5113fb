/**
 * The demo's false-alarm figures, read from the seeded database after the replay (demo-seed.ts prints
 * them; `node --import tsx seeds/figures.ts` prints them for an existing database):
 *
 * - the share of acknowledged alarms whose cause is FA-LIMIT, and the same share over every alarm as
 *   the daily review's judge would call it (judgeAlarm: the review leaves the last two days open);
 * - for every episode, the wafers its chamber ran from the onset up to the first alarm opened on it;
 * - alarms per 10,000 in-control wafer-steps (wafer-steps outside every episode of their chamber; the
 *   alarms the judge calls seasoning or FA-LIMIT), for the month and for the real-volume tail;
 * - whether any alarm carries the leak-like notice on a chamber and time without a leak episode
 *   (asked of the alarm page's own view, getAlarm, so it is the notice an engineer would see);
 * - the wafers per hour each chamber × step ran in the real-volume tail.
 *
 * Only reads. Alarm states other helpers may add (e.g. a cleared state) are counted like any other.
 */
import type { Knex } from 'knex';
import type { DemoScenario } from './demo/index.ts';
import { episodeOfAlarm, judgeAlarm } from './demo-replay.ts';
import { getAlarm } from '../src/lib/server/views/alarm-queue.ts';

const DAY = 86_400_000;
const HOUR = 3_600_000;
const LEAK_KINDS = new Set(['air_leak', 'he_backside_leak']);

export interface EpisodeFigure {
	kind: string;
	chamber: string;
	start: number;
	/** The first alarm opened on the chamber at or after the onset, any rule. */
	first: { id: number; rule: string; step: string; openedAt: number; wafers: number } | null;
	/** The first fleet alarm opened at or after the onset. */
	firstFleet: { id: number; step: string; openedAt: number; wafers: number } | null;
	/** Alarms opened before the onset and still extended by wafers after it (they can hide the episode). */
	extendedIntoIt: number[];
}

export interface RateFigure {
	waferSteps: number;
	/** Alarms the judge calls FA-LIMIT, per rule and severity. */
	falseAlarms: number;
	/** …plus those it calls seasoning (within a day of a wet clean). */
	nonEpisode: number;
	byRule: Record<string, number>;
	perTenK: { falseAlarms: number; nonEpisode: number };
}

export interface DemoFigures {
	alarms: number;
	acknowledged: { total: number; byCause: Record<string, number>; faLimitShare: number | null };
	judged: { total: number; byCause: Record<string, number>; faLimitShare: number | null };
	judgedRealVolume: { total: number; byCause: Record<string, number>; faLimitShare: number | null } | null;
	episodes: EpisodeFigure[];
	month: RateFigure;
	realVolume: RateFigure | null;
	/**
	 * falseNotices: on a chamber with no leak episode at all; outsideEpisode: on a leak episode's
	 * chamber but on an alarm that does not overlap the episode (e.g. a fleet alarm after the repair).
	 */
	leak: { checked: number; falseNotices: LeakNotice[]; outsideEpisode: LeakNotice[]; trueNotices: number };
	volume: { from: number; hours: number; perChamberStep: { chamber: string; step: string; wafersPerHour: number }[] } | null;
}

export interface LeakNotice {
	id: number;
	chamber: string;
	rule: string;
	gases: string[];
}

interface AlarmRow {
	id: number;
	rule: string;
	severity: string;
	state: string;
	opened_at: number;
	last_seen_at: number;
	code: string;
	chamber_id: number;
	step: string;
}

const share = (byCause: Record<string, number>, total: number) => (total > 0 ? (byCause['FA-LIMIT'] ?? 0) / total : null);
const bump = (m: Record<string, number>, key: string) => (m[key] = (m[key] ?? 0) + 1);

export async function demoFigures(k: Knex, s: DemoScenario): Promise<DemoFigures> {
	const alarms = (
		await k('alarms as a')
			.join('chambers as c', 'c.id', 'a.chamber_id')
			.join('recipe_steps as rs', 'rs.id', 'a.recipe_step_id')
			.orderBy('a.opened_at')
			.select('a.id', 'a.rule', 'a.severity', 'a.state', 'a.opened_at', 'a.last_seen_at', 'c.code', 'a.chamber_id', 'rs.name as step')
	).map((a: AlarmRow) => ({ ...a, opened_at: Number(a.opened_at), last_seen_at: Number(a.last_seen_at) })) as AlarmRow[];
	const cleans = new Map<number, number[]>();
	for (const m of await k('maintenance_events').where({ kind: 'wet_clean' }).select('chamber_id', 'at'))
		cleans.set(m.chamber_id, [...(cleans.get(m.chamber_id) ?? []), Number(m.at)]);
	// The review's clean test: a wet clean on the chamber at or before the opening, less than a day before it.
	const afterClean = (a: AlarmRow) => (cleans.get(a.chamber_id) ?? []).some((t) => t <= a.opened_at && t > a.opened_at - DAY);
	const volumeFrom = s.realVolume ? s.realVolume.from.getTime() : null;

	// Acknowledged alarms by the cause of their latest acknowledgement.
	const acks = await k('alarm_actions as x')
		.join('cause_codes as cc', 'cc.id', 'x.cause_code_id')
		.where('x.action', 'acknowledged')
		.orderBy([{ column: 'x.at' }, { column: 'x.id' }])
		.select('x.alarm_id', 'cc.code');
	const ackCause = new Map<number, string>();
	for (const a of acks) ackCause.set(a.alarm_id, a.code);
	const ackBy: Record<string, number> = {};
	for (const c of ackCause.values()) bump(ackBy, c);

	const judgedBy: Record<string, number> = {};
	const judgedTailBy: Record<string, number> = {};
	const cause = new Map<number, string>();
	for (const a of alarms) {
		const c = judgeAlarm(s, a, afterClean(a));
		cause.set(a.id, c);
		bump(judgedBy, c);
		if (volumeFrom !== null && a.opened_at >= volumeFrom) bump(judgedTailBy, c);
	}

	// In-control wafer-steps: outside every episode of their chamber.
	const chamberIds = new Map<string, number>((await k('chambers').select('id', 'code')).map((c) => [c.code, c.id]));
	const countSteps = async (chamberId: number | null, from: number, to: number) =>
		Number(
			(
				await k('wafer_steps')
					.modify((q) => {
						if (chamberId !== null) q.where({ chamber_id: chamberId });
					})
					.andWhere('processed_at', '>=', from)
					.andWhere('processed_at', '<', to)
					.count({ n: '*' })
					.first()
			)?.n ?? 0
		);
	const inControl = async (from: number) => {
		let n = await countSteps(null, from, s.end.getTime() + 1);
		for (const e of s.episodes) {
			const id = chamberIds.get(e.chamberCode);
			if (id === undefined) continue;
			n -= await countSteps(id, Math.max(from, e.start.getTime()), e.end ? e.end.getTime() : s.end.getTime() + 1);
		}
		return n;
	};
	const rate = (waferSteps: number, list: AlarmRow[]): RateFigure => {
		const byRule: Record<string, number> = {};
		let falseAlarms = 0;
		let nonEpisode = 0;
		for (const a of list) {
			const c = cause.get(a.id)!;
			if (c !== 'FA-LIMIT' && c !== 'PRC-SEAS') continue;
			nonEpisode++;
			if (c === 'FA-LIMIT') falseAlarms++;
			bump(byRule, `${a.rule} (${a.severity})`);
		}
		const per = (x: number) => (waferSteps > 0 ? (x / waferSteps) * 10_000 : 0);
		return { waferSteps, falseAlarms, nonEpisode, byRule, perTenK: { falseAlarms: per(falseAlarms), nonEpisode: per(nonEpisode) } };
	};
	const month = rate(await inControl(s.start.getTime()), alarms);
	const realVolume = volumeFrom !== null ? rate(await inControl(volumeFrom), alarms.filter((a) => a.opened_at >= volumeFrom)) : null;

	// Episodes: wafers of the chamber from the onset up to the first alarm's opening.
	const wafersBetween = async (chamberId: number, from: number, to: number) =>
		Number(
			(
				await k('wafer_steps')
					.where({ chamber_id: chamberId })
					.andWhere('processed_at', '>=', from)
					.andWhere('processed_at', '<=', to)
					.countDistinct({ n: 'wafer_id' })
					.first()
			)?.n ?? 0
		);
	const episodes: EpisodeFigure[] = [];
	for (const e of s.episodes) {
		const id = chamberIds.get(e.chamberCode)!;
		const start = e.start.getTime();
		const mine = alarms.filter((a) => a.chamber_id === id);
		const first = mine.find((a) => a.opened_at >= start);
		const fleet = mine.find((a) => a.opened_at >= start && a.rule === 'fleet');
		episodes.push({
			kind: e.kind,
			chamber: e.chamberCode,
			start,
			first: first ? { id: first.id, rule: first.rule, step: first.step, openedAt: first.opened_at, wafers: await wafersBetween(id, start, first.opened_at) } : null,
			firstFleet: fleet ? { id: fleet.id, step: fleet.step, openedAt: fleet.opened_at, wafers: await wafersBetween(id, start, fleet.opened_at) } : null,
			extendedIntoIt: mine.filter((a) => a.opened_at < start && a.last_seen_at >= start).map((a) => a.id)
		});
	}

	// Leak-like notices, as the alarm page computes them.
	const falseNotices: LeakNotice[] = [];
	const outsideEpisode: LeakNotice[] = [];
	const leakChambers = new Set(s.episodes.filter((e) => LEAK_KINDS.has(e.kind)).map((e) => e.chamberCode));
	let trueNotices = 0;
	for (const a of alarms) {
		const view = await getAlarm(a.id, k);
		const leak = view?.alarm.leak;
		if (!leak) continue;
		const ep = episodeOfAlarm(s, a);
		const notice = { id: a.id, chamber: a.code, rule: a.rule, gases: leak.gases.map(String) };
		if (ep && LEAK_KINDS.has(ep.kind)) trueNotices++;
		else if (leakChambers.has(a.code)) outsideEpisode.push(notice);
		else falseNotices.push(notice);
	}

	let volume: DemoFigures['volume'] = null;
	if (volumeFrom !== null) {
		const hours = (s.end.getTime() - volumeFrom) / HOUR;
		const rows = await k('wafer_steps as ws')
			.join('chambers as c', 'c.id', 'ws.chamber_id')
			.join('recipe_steps as rs', 'rs.id', 'ws.recipe_step_id')
			.where('ws.processed_at', '>=', volumeFrom)
			.groupBy('c.code', 'rs.name')
			.orderBy(['c.code', 'rs.name'])
			.select('c.code', 'rs.name as step')
			.count({ n: '*' });
		volume = { from: volumeFrom, hours, perChamberStep: rows.map((r) => ({ chamber: String(r.code), step: String(r.step), wafersPerHour: Number(r.n) / hours })) };
	}

	const tailTotal = Object.values(judgedTailBy).reduce((a, b) => a + b, 0);
	return {
		alarms: alarms.length,
		acknowledged: { total: ackCause.size, byCause: ackBy, faLimitShare: share(ackBy, ackCause.size) },
		judged: { total: alarms.length, byCause: judgedBy, faLimitShare: share(judgedBy, alarms.length) },
		judgedRealVolume: volumeFrom !== null ? { total: tailTotal, byCause: judgedTailBy, faLimitShare: share(judgedTailBy, tailTotal) } : null,
		episodes,
		month,
		realVolume,
		leak: { checked: alarms.length, falseNotices, outsideEpisode, trueNotices },
		volume
	};
}

const pct = (x: number | null) => (x === null ? 'n/a' : `${(100 * x).toFixed(1)} %`);
const causes = (m: Record<string, number>) =>
	Object.entries(m)
		.sort((a, b) => b[1] - a[1] || a[0].localeCompare(b[0]))
		.map(([c, n]) => `${c} ${n}`)
		.join(', ');
const utc = (t: number) => `${new Date(t).toISOString().slice(0, 16)}Z`;

/** The figures as the seed's report prints them, one fact a line. */
export function formatFigures(f: DemoFigures): string[] {
	const out: string[] = [];
	out.push(`False-alarm figures (the daily review's judge: episode overlap → its cause; within a day after a wet clean → PRC-SEAS; else FA-LIMIT):`);
	out.push(`  acknowledged alarms: ${f.acknowledged.total}, FA-LIMIT share ${pct(f.acknowledged.faLimitShare)} (${causes(f.acknowledged.byCause)})`);
	out.push(`  all ${f.judged.total} alarms as judged (the last two days are left unreviewed): FA-LIMIT share ${pct(f.judged.faLimitShare)} (${causes(f.judged.byCause)})`);
	if (f.judgedRealVolume)
		out.push(`  alarms opened in the real-volume tail: ${f.judgedRealVolume.total}, FA-LIMIT share ${pct(f.judgedRealVolume.faLimitShare)} (${causes(f.judgedRealVolume.byCause)})`);
	const rateLine = (name: string, r: RateFigure) =>
		`  ${name}: ${r.perTenK.falseAlarms.toFixed(1)} FA-LIMIT alarms per 10,000 in-control wafer-steps (${r.falseAlarms} over ${r.waferSteps.toLocaleString('en')}); ` +
		`${r.perTenK.nonEpisode.toFixed(1)} counting seasoning (${r.nonEpisode}: ${causes(r.byRule) || 'none'})`;
	out.push(rateLine('whole window', f.month));
	if (f.realVolume) out.push(rateLine('real-volume tail', f.realVolume));
	out.push(`  episodes, wafers of the chamber from onset to the first alarm opened after it:`);
	for (const e of f.episodes) {
		const first = e.first ? `${e.first.wafers} wafers (${e.first.rule}, ${e.first.step}, ${((e.first.openedAt - e.start) / HOUR).toFixed(1)} h)` : 'NO ALARM';
		const fleet = e.firstFleet ? `; first fleet alarm after ${e.firstFleet.wafers} wafers (${e.firstFleet.step})` : '; no fleet alarm';
		const ext = e.extendedIntoIt.length ? `; ${e.extendedIntoIt.length} older alarm(s) extended into it (#${e.extendedIntoIt.join(', #')})` : '';
		out.push(`    ${e.chamber} ${e.kind} from ${utc(e.start)}: ${first}${fleet}${ext}`);
	}
	const list = (l: LeakNotice[]) => l.slice(0, 8).map((x) => `#${x.id} ${x.chamber} ${x.rule} ${x.gases.join('+')}`).join('; ');
	const fl = f.leak.falseNotices;
	const ol = f.leak.outsideEpisode;
	out.push(
		`  leak-like notice on a chamber without a leak episode: ${fl.length === 0 ? 'none' : `${fl.length} FALSE (${list(fl)})`}` +
			` (over ${f.leak.checked} alarms); ${f.leak.trueNotices} on alarms of a leak episode` +
			(ol.length ? `; ${ol.length} on a leak chamber outside its episode (${list(ol)})` : '')
	);
	if (f.volume) {
		const r = f.volume.perChamberStep.map((x) => x.wafersPerHour).sort((a, b) => a - b);
		const outside = f.volume.perChamberStep.filter((x) => x.wafersPerHour < 15 || x.wafersPerHour > 30);
		out.push(
			`  real volume from ${utc(f.volume.from)} (${f.volume.hours} h): ${r[0].toFixed(1)}–${r[r.length - 1].toFixed(1)} wafers an hour per chamber × step (median ${r[r.length >> 1].toFixed(1)})` +
				(outside.length ? `; outside 15–30: ${outside.map((x) => `${x.chamber}/${x.step}`).join(', ')}` : '')
		);
	} else out.push('  no real-volume tail (the small variant: every day at the compressed pace)');
	return out;
}
