/**
 * The in-control law of the limit-calibration Monte Carlo (bench/calibration.ts and
 * tests/unit/monitoring/calibration.test.ts): correlated factor data of the kind an OES summary has.
 *
 * x_j = μ_j + Σ_a W_aj f_a + σ_j e_j, three latent factors f_a ~ N(0, 1) (plasma density, a gas
 * flow, a wall state), loadings W_aj = s_a u_aj with s = (3, 2, 1.5) and u_aj ~ N(0, 1) drawn once
 * per law (so some channels carry much process signal and some are mostly noise, as OES background
 * channels are), independent channel noise e_j ~ N(0, 1) with sd σ_j = exp(0.3 v_j), v_j ~ N(0, 1)
 * (channels differ in gain). Levels μ_j are irrelevant after centring and set to 1,000.
 * This law is our own invention (no published data set), chosen to be wide, correlated and uneven.
 */
import normal from '@stdlib/random-base-normal';

export const FACTOR_SD = [3, 2, 1.5];

export interface Law {
	p: number;
	/** Loadings, factor-major: W[a][j]. */
	W: Float64Array[];
	/** Noise sd per channel. */
	sigma: Float64Array;
	/** Seeded standard normal draws. */
	g: () => number;
}

export function makeLaw(p: number, seed: number): Law {
	const g = normal.factory(0, 1, { seed });
	const W = FACTOR_SD.map((s) => Float64Array.from({ length: p }, () => s * g()));
	const sigma = Float64Array.from({ length: p }, () => Math.exp(0.3 * g()));
	return { p, W, sigma, g };
}

/** m in-control wafers as one flat Float64Array (row i at i·p). */
export function draw(law: Law, m: number): Float64Array {
	const { p, W, sigma, g } = law;
	const out = new Float64Array(m * p);
	const f = new Float64Array(W.length);
	for (let i = 0; i < m; i++) {
		for (let a = 0; a < W.length; a++) f[a] = g();
		const o = i * p;
		for (let j = 0; j < p; j++) {
			let v = 1000 + sigma[j] * g();
			for (let a = 0; a < W.length; a++) v += W[a][j] * f[a];
			out[o + j] = v;
		}
	}
	return out;
}

/** Rows of a flat matrix as views. */
export function rowsOf(flat: Float64Array, p: number): Float64Array[] {
	return Array.from({ length: flat.length / p }, (_, i) => flat.subarray(i * p, (i + 1) * p));
}

export function meanSd(v: readonly number[]): { mean: number; sd: number; min: number; max: number } {
	const mean = v.reduce((a, b) => a + b, 0) / v.length;
	const sd = v.length > 1 ? Math.sqrt(v.reduce((a, b) => a + (b - mean) ** 2, 0) / (v.length - 1)) : 0;
	return { mean, sd, min: Math.min(...v), max: Math.max(...v) };
}
