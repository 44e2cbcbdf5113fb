/**
 * Calibration of the control limits at the golden-set sizes fabs really have (issue 11):
 * `node --import tsx bench/calibration.ts [sets] [limits]`, limits = `cross-validated` (default) or
 * `theory` (the large-sample formulas, the engine's method before cross-validated limits).
 *
 * For each golden size n ∈ {20, 30, 50, 100, 300} × p ∈ {12, 60, 250, 1,000} (law:
 * bench/calibration-law.ts), `sets` golden sets (default 50) are fitted with k = 3 at α = 1 %, and
 * 400 new in-control wafers scored against each; the table gives the share beyond the T² limit, the
 * Q limit and the wafer's combined state, as the mean over sets and (in brackets) the sd over sets.
 * Then the power at n = 30, p = 1,000: three adjacent channels raised by 10 noise-σ (a molecular band
 * appearing), share of wafers beyond Q and beyond the combined state. `… 30 cross-validated power`
 * prints only the power, at n = 30 and 100, with the band on random or on background channels.
 */
import { fitBaseline, scoreBatch, type BaselineModel } from '../src/lib/monitoring/index.ts';
import { draw, makeLaw, meanSd, rowsOf } from './calibration-law.ts';
import * as engine from '../src/lib/monitoring/index.ts';

const SETS = Number(process.argv[2] ?? 50);
const LIMITS = process.argv[3] ?? 'cross-validated';
const NEW = 400;
const ALPHA = 0.01;
const NS = [20, 30, 50, 100, 300];
const PS = [12, 60, 250, 1000];

/** The wafer's combined state beyond its limit: the engine's rule when it has one, else any ratio > 1 (the old rule). */
function beyond(model: BaselineModel, t2: number, q: number, phi: number): boolean {
	const fn = (engine as Record<string, unknown>).beyondLimit as ((m: BaselineModel, t2: number, q: number, phi: number) => boolean) | undefined;
	if (fn) return fn(model, t2, q, phi);
	return t2 > model.limits.t2 || q > model.limits.q || phi > model.limits.phi;
}

function fit(rows: Float64Array[], p: number, limits = LIMITS): BaselineModel {
	const names = Array.from({ length: p }, (_, j) => `ch${j}`);
	return fitBaseline(rows, { featureNames: names, components: 3, alpha: ALPHA, limits } as Parameters<typeof fitBaseline>[1]);
}

/**
 * One cell of the grid: `sets` golden sets of n wafers × p features (law seed + 7919·s), k = 3,
 * α = 1 %, each scored on `newWafers` new in-control wafers; share beyond each limit per set, as
 * mean, sd, min and max over the sets.
 */
export function cell(n: number, p: number, sets: number, seed: number, limits = LIMITS, newWafers = NEW) {
	const NEW = newWafers;
	const t2: number[] = [];
	const q: number[] = [];
	const st: number[] = [];
	const phi: number[] = [];
	for (let s = 0; s < sets; s++) {
		const law = makeLaw(p, seed + 7919 * s);
		const model = fit(rowsOf(draw(law, n), p), p, limits);
		const r = scoreBatch(model, draw(law, NEW));
		let a = 0, b = 0, c = 0, d = 0;
		for (let i = 0; i < NEW; i++) {
			if (r.phi[i] > model.limits.phi) d++;
			if (r.t2[i] > model.limits.t2) a++;
			if (r.q[i] > model.limits.q) b++;
			if (beyond(model, r.t2[i], r.q[i], r.phi[i])) c++;
		}
		t2.push(a / NEW);
		q.push(b / NEW);
		st.push(c / NEW);
		phi.push(d / NEW);
	}
	return { t2: meanSd(t2), q: meanSd(q), state: meanSd(st), phi: meanSd(phi) };
}

/**
 * The first of the p − 2 runs of three adjacent channels whose in-control variance is most noise
 * (least process signal): where a new species' band appears in a spectrum (a nitrogen band in a
 * chlorine etch lands on background channels).
 */
export function backgroundBand(law: ReturnType<typeof makeLaw>): number {
	let best = 0;
	let bestShare = -Infinity;
	for (let j = 0; j + 2 < law.p; j++) {
		let share = 0;
		for (let d = 0; d < 3; d++) {
			const sig = law.W.reduce((a, w) => a + w[j + d] ** 2, 0);
			share += law.sigma[j + d] ** 2 / (sig + law.sigma[j + d] ** 2);
		}
		if (share > bestShare) [best, bestShare] = [j, share];
	}
	return best;
}

/** Share of wafers beyond Q with a 3-channel band of 10 noise-σ, on random or background channels. */
export function power(n: number, sets: number, seed: number, where: 'random' | 'background') {
	const p = 1000;
	const q: number[] = [];
	const st: number[] = [];
	for (let s = 0; s < sets; s++) {
		const law = makeLaw(p, seed + 104729 * s);
		const model = fit(rowsOf(draw(law, n), p), p);
		const x = draw(law, NEW);
		const j0 = where === 'random' ? 100 + ((s * 67) % 800) : backgroundBand(law);
		for (let i = 0; i < NEW; i++) for (let j = j0; j < j0 + 3; j++) x[i * p + j] += 10 * law.sigma[j];
		const r = scoreBatch(model, x);
		let b = 0, c = 0;
		for (let i = 0; i < NEW; i++) {
			if (r.q[i] > model.limits.q) b++;
			if (beyond(model, r.t2[i], r.q[i], r.phi[i])) c++;
		}
		q.push(b / NEW);
		st.push(c / NEW);
	}
	return { q: meanSd(q), state: meanSd(st) };
}

function pct(x: { mean: number; sd: number }): string {
	return `${(100 * x.mean).toFixed(2).padStart(6)} % (${(100 * x.sd).toFixed(2)})`;
}

async function main() {
	const t0 = performance.now();
	console.log(`limits: ${LIMITS}; ${SETS} golden sets per cell, ${NEW} new wafers each, k = 3, α = ${ALPHA}`);
	if (process.argv[4] === 'power') {
		for (const n of [30, 100])
			for (const where of ['random', 'background'] as const) {
				const pw = power(n, SETS, 424242, where);
				console.log(`power n = ${n}, p = 1000, 3-channel band of 10 noise-σ on ${where} channels: Q ${pct(pw.q)}, state ${pct(pw.state)}`);
			}
		return;
	}
	console.log('   n      p |  T² beyond (sd over sets) |   Q beyond (sd)      | state beyond (sd)    |   φ beyond (sd)');
	for (const n of NS)
		for (const p of PS) {
			const c = cell(n, p, SETS, 1000 * n + p);
			console.log(`${String(n).padStart(4)} ${String(p).padStart(6)} | ${pct(c.t2).padEnd(24)} | ${pct(c.q).padEnd(20)} | ${pct(c.state).padEnd(20)} | ${pct(c.phi)}`);
		}
	const pw = power(30, SETS, 424242, 'random');
	console.log(`power n = 30, p = 1000, 3-channel band of 10 noise-σ on random channels: Q ${pct(pw.q)}, state ${pct(pw.state)}`);
	console.log(`(${((performance.now() - t0) / 1000).toFixed(0)} s)`);
}

if (import.meta.url === `file://${process.argv[1]}`) main();
