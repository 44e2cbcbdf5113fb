import { resolveInControl } from './reference';

/**
 * The sustained-excursion patterns checked, adapted from the Western Electric handbook's zone tests
 * (names are Lockstep's own).
 * - `beyond-3sd`: one value beyond 3σ.
 * - `2-of-3-beyond-2sd`: two of three consecutive values beyond 2σ on the same side.
 * - `4-of-5-beyond-1sd`: four of five consecutive values beyond 1σ on the same side.
 * - `8-same-side`: eight consecutive values on the same side of the centre.
 */
export type RunRule = 'beyond-3sd' | '2-of-3-beyond-2sd' | '4-of-5-beyond-1sd' | '8-same-side';

/** One rule firing: the pattern completes at `index` and spans `start`…`index`. */
export interface RunRuleViolation {
	rule: RunRule;
	index: number;
	start: number;
	side: 'high' | 'low';
}

/** Options of {@link runRules}. */
export interface RunRuleOptions {
	mean?: number;
	sd?: number;
	/** Reference segment length when mean/sd are not given (default 20). */
	referenceLength?: number;
	/** Rules to check (default all four). */
	rules?: readonly RunRule[];
	/** Sides to report (default `high` only: a ratio series matters when it rises). */
	sides?: readonly ('high' | 'low')[];
}

const ALL: readonly RunRule[] = ['beyond-3sd', '2-of-3-beyond-2sd', '4-of-5-beyond-1sd', '8-same-side'];
const SPEC: Record<RunRule, { m: number; of: number; zone: number }> = {
	'beyond-3sd': { m: 1, of: 1, zone: 3 },
	'2-of-3-beyond-2sd': { m: 2, of: 3, zone: 2 },
	'4-of-5-beyond-1sd': { m: 4, of: 5, zone: 1 },
	'8-same-side': { m: 8, of: 8, zone: 0 }
};

/**
 * Run rules for sustained excursions of a series (e.g. a chamber's Q/limit ratios).
 *
 * Formula: with u_i = (x_i − μ0)/σ, a rule (m of w beyond c) fires at i when at least m of
 * u_{i−w+1}…u_i exceed c on the same side (for the centre-line rule, c = 0 and strictly beyond);
 * for the 2-of-3 and 4-of-5 rules the value at i must itself be one of them, so that a pattern is
 * reported when it completes.
 * Source: Western Electric Co. (1956) "Statistical Quality Control Handbook", tests for unnatural
 * patterns, zones A–C (rules 1–4); as listed in Montgomery (2009) §5.3.6.
 *
 * @param series values in time order
 * @param options centre and spread (or a reference segment), rules and sides to check
 * @returns violations ordered by index
 * @throws RangeError on a non-finite value or too short a reference segment
 * @example runRules([0, 0, 0, 3.5], { mean: 0, sd: 1 })[0].rule // → 'beyond-3sd'
 */
export function runRules(series: ArrayLike<number>, options: RunRuleOptions = {}): RunRuleViolation[] {
	const { mean, sd } = resolveInControl(series, options, 20);
	const rules = options.rules ?? ALL;
	const sides = options.sides ?? ['high'];
	const n = series.length;
	const u = new Float64Array(n);
	for (let i = 0; i < n; i++) {
		if (!Number.isFinite(series[i])) throw new RangeError(`value ${i} is not finite`);
		u[i] = (series[i] - mean) / sd;
	}
	const out: RunRuleViolation[] = [];
	for (let i = 0; i < n; i++) {
		for (const rule of rules) {
			const { m, of, zone } = SPEC[rule];
			if (i + 1 < of) continue;
			for (const side of sides) {
				const s = side === 'high' ? 1 : -1;
				if (!(s * u[i] > zone)) continue;
				let count = 0;
				for (let l = i - of + 1; l <= i; l++) if (s * u[l] > zone) count++;
				if (count >= m) out.push({ rule, index: i, start: i - of + 1, side });
			}
		}
	}
	return out;
}
