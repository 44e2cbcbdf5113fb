/**
 * The demo fab's seed: the invented scenario of seeds/demo replayed day by day, as it would have
 * happened — wafer summaries arrive and are scored on arrival, technicians log wet cleans, engineers
 * pick golden wafers, build and approve baselines (and rebuild them after each wet clean), fleet
 * models are built and matched, and the older alarms get acknowledged with cause codes. Nothing is
 * invented after the fact: every score, rollup and alarm comes from the same code paths as production.
 *
 * The demo ends at the current hour (or LOCKSTEP_DEMO_END), so its last day is "this morning".
 */
import type { Knex } from 'knex';
import fs from 'node:fs';
import { buildScenario, DEFAULT_REAL_VOLUME_DAYS, type DemoScenario } from './demo/index.ts';
import { demoFigures, formatFigures } from './demo-figures.ts';
import { createUser } from '../src/lib/server/users.ts';
import { replayDemo, type ReplayReport } from './demo-replay.ts';

export const DEMO_PASSWORD = 'lockstep-demo';

/**
 * Days at the end of the demo that run at a real chamber's volume: LOCKSTEP_DEMO_VOLUME_DAYS, 0–10
 * (default 3). 0 seeds the small variant (every day at the compressed pace), which the e2e suite uses
 * to stay within CI's time.
 */
export function demoVolumeDays(env: NodeJS.ProcessEnv = process.env): number {
	const v = env.LOCKSTEP_DEMO_VOLUME_DAYS;
	if (v === undefined || v === '') return DEFAULT_REAL_VOLUME_DAYS;
	const n = Number(v);
	if (!Number.isInteger(n) || n < 0 || n > 10) throw new Error(`LOCKSTEP_DEMO_VOLUME_DAYS must be a whole number from 0 to 10, not "${v}"`);
	return n;
}

export function demoEnd(env: NodeJS.ProcessEnv = process.env): Date {
	if (env.LOCKSTEP_DEMO_END) {
		const d = new Date(env.LOCKSTEP_DEMO_END);
		if (Number.isNaN(d.getTime())) throw new Error(`LOCKSTEP_DEMO_END is not a date: "${env.LOCKSTEP_DEMO_END}"`);
		return d;
	}
	const hour = 3_600_000;
	return new Date(Math.floor(Date.now() / hour) * hour);
}

/** The SQLite file's size, when the database is one (PostgreSQL: nothing said). */
function databaseSize(k: Knex): string {
	const file = (k.client.config?.connection as { filename?: string } | undefined)?.filename;
	if (!file || file === ':memory:' || !fs.existsSync(file)) return '';
	const wal = fs.existsSync(`${file}-wal`) ? fs.statSync(`${file}-wal`).size : 0;
	return ` Database ${((fs.statSync(file).size + wal) / 1e6).toFixed(0)} MB (${file}).`;
}

const idOf = (r: unknown) => (typeof r === 'object' && r !== null ? (r as { id: number }).id : (r as number));

async function createStructure(k: Knex, s: DemoScenario) {
	const t = s.start.getTime();
	await k.transaction(async (trx) => {
		const areaIds = new Map<string, number>();
		for (const a of s.areas) areaIds.set(a.code, idOf((await trx('areas').insert(a).returning('id'))[0]));
		const toolIds = new Map<string, number>();
		for (const tl of s.tools)
			toolIds.set(
				tl.code,
				idOf((await trx('tools').insert({ code: tl.code, name: tl.name, model: tl.model, area_id: areaIds.get(tl.areaCode) }).returning('id'))[0])
			);
		for (const c of s.chambers) await trx('chambers').insert({ code: c.code, name: c.name, tool_id: toolIds.get(c.toolCode), created_at: t });
	});
}

export async function seedDemo(k: Knex, opts: { log: (s: string) => void; end?: Date; realVolumeDays?: number }): Promise<string> {
	const existing = Number((await k('areas').count({ n: '*' }).first())?.n ?? 0);
	const users = Number((await k('users').count({ n: '*' }).first())?.n ?? 0);
	if (existing > 0 || users > 0) return 'The database has data already; the demo seed left it as it is.';
	const t0 = performance.now();
	const scenario = buildScenario({ end: opts.end ?? demoEnd(), realVolumeDays: opts.realVolumeDays ?? demoVolumeDays() });
	for (const p of scenario.people) await createUser({ ...p, password: DEMO_PASSWORD, timeZone: scenario.fab.timeZone }, k);
	await createStructure(k, scenario);
	const report: ReplayReport = await replayDemo(k, scenario, opts.log);
	await (await import('./demo-mail.ts')).seedDemoMail(k, opts.log);
	const secs = ((performance.now() - t0) / 1000).toFixed(1);
	const t1 = performance.now();
	const figures = formatFigures(await demoFigures(k, scenario));
	const figureSecs = ((performance.now() - t1) / 1000).toFixed(1);
	const volume = scenario.realVolume
		? `the last ${Math.round((scenario.end.getTime() - scenario.realVolume.from.getTime()) / 86_400_000)} days at ${scenario.realVolume.wafersPerHour} wafers an hour per chamber`
		: 'no real-volume days (the small variant)';
	const lines = [
		`Demo fab "${scenario.fab.name}" loaded in ${secs} s: ${report.waferSteps.toLocaleString('en')} wafer-steps from ${report.files} files, ` +
			`${report.baselines} baselines approved, ${report.fleetModels} fleet models, ${report.alarms} alarms (${report.acknowledged} acknowledged), ` +
			`${report.maintenance} maintenance events, ${scenario.start.toISOString().slice(0, 16)}Z → ${scenario.end.toISOString().slice(0, 16)}Z, ${volume}.`,
		`Demo accounts (password "${DEMO_PASSWORD}"): ${scenario.people.map((p) => `${p.username} (${p.role})`).join(', ')}`,
		`Seed time by part: ${Object.entries(report.phases).map(([p, ms]) => `${p} ${(ms / 1000).toFixed(1)} s`).join(', ')}; figures ${figureSecs} s.${databaseSize(k)}`,
		...figures
	];
	for (const l of lines) opts.log(l);
	return lines.join('\n');
}
