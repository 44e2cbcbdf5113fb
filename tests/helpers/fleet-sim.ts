/**
 * Seeded fleets for the fleet-matching calibration (tests and bench/fleet.ts). Every chamber draws
 * its wafers from one factor model, x = μ + W f + e (3 latent factors that every channel loads on,
 * plus independent noise), so the features are correlated as OES channels are. "Identical" chambers
 * share μ, W and the noise level; an offset chamber's recent wafers are moved by `offsetSd` times each
 * chosen feature's total standard deviation (a wafer's σ, the yardstick an engineer reads).
 */
import { XSadd as XSAdd } from 'ml-xsadd';

export interface SimChamber {
	chamberId: string;
	golden: Float64Array[];
	recent: Float64Array[];
}

export interface FleetSimOptions {
	chambers: number;
	features: number;
	golden: number;
	recent: number;
	/** chamber index whose recent wafers are offset (none when absent) */
	offsetChamber?: number;
	/** offset in each feature's σ (default 2) */
	offsetSd?: number;
	/** features offset (default [0, 1, 2]) */
	offsetFeatures?: number[];
}

/** A fleet for one Monte Carlo run; `seed` makes it reproducible. */
export function simulateFleet(o: FleetSimOptions, seed: number): { chambers: SimChamber[]; featureNames: string[]; sd: Float64Array } {
	const rng = new XSAdd(seed);
	let spare: number | null = null;
	const gauss = () => {
		// Box–Muller, both values used
		if (spare !== null) {
			const s = spare;
			spare = null;
			return s;
		}
		const u = Math.max(rng.random(), 1e-300);
		const r = Math.sqrt(-2 * Math.log(u));
		const a = 2 * Math.PI * rng.random();
		spare = r * Math.sin(a);
		return r * Math.cos(a);
	};
	const p = o.features;
	const fixed = new XSAdd(4242); // one "process" for every run: the same loadings and means
	const W = Array.from({ length: 3 }, () => Float64Array.from({ length: p }, () => fixed.random() * 2 - 1));
	const mu = Float64Array.from({ length: p }, () => 100 + 50 * fixed.random());
	const noise = 0.3;
	const sd = Float64Array.from({ length: p }, (_, j) => Math.sqrt(W[0][j] ** 2 + W[1][j] ** 2 + W[2][j] ** 2 + noise ** 2));
	const draw = (shift: Float64Array | null) => {
		const f0 = gauss(), f1 = gauss(), f2 = gauss();
		const x = new Float64Array(p);
		for (let j = 0; j < p; j++) x[j] = mu[j] + f0 * W[0][j] + f1 * W[1][j] + f2 * W[2][j] + noise * gauss() + (shift ? shift[j] : 0);
		return x;
	};
	const offsetFeatures = o.offsetFeatures ?? [0, 1, 2];
	const chambers: SimChamber[] = [];
	for (let c = 0; c < o.chambers; c++) {
		let shift: Float64Array | null = null;
		if (c === o.offsetChamber) {
			shift = new Float64Array(p);
			for (const j of offsetFeatures) shift[j] = (o.offsetSd ?? 2) * sd[j];
		}
		chambers.push({
			chamberId: `C${String(c + 1).padStart(2, '0')}`,
			golden: Array.from({ length: o.golden }, () => draw(null)),
			recent: Array.from({ length: o.recent }, () => draw(shift))
		});
	}
	return { chambers, featureNames: Array.from({ length: p }, (_, j) => `f${j}`), sd };
}
