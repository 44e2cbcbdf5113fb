import normalBase from '@stdlib/random-base-normal';
import { XSadd } from 'ml-xsadd';

/** One seeded random stream: uniform draws from XSadd, standard normal draws from stdlib. */
export interface Stream {
	/** Uniform on [0, 1). */
	uniform(): number;
	/** Standard normal N(0, 1). */
	normal(): number;
	/** Uniform on [lo, hi). */
	between(lo: number, hi: number): number;
	/** Integer uniform on [lo, hi] (both ends included). */
	int(lo: number, hi: number): number;
}

/**
 * A 32-bit seed for the sub-stream `label` of the master `seed`.
 *
 * Every chamber, tool and scenario element draws from its own stream so that adding a chamber or
 * reading the chambers in another order never changes the numbers of the others. Neither ml-xsadd
 * nor stdlib offers named sub-streams, hence this small mixer: FNV-1a over the label, then the
 * "lowbias32" finaliser (C. Wellons, 2018, hash-prospector) over seed ⊕ label hash.
 */
export function subSeed(seed: number, label: string): number {
	let h = 0x811c9dc5;
	for (let i = 0; i < label.length; i++) {
		h ^= label.charCodeAt(i);
		h = Math.imul(h, 0x01000193) >>> 0;
	}
	let x = (h ^ Math.imul(seed >>> 0, 0x9e3779b1)) >>> 0;
	x ^= x >>> 16;
	x = Math.imul(x, 0x7feb352d) >>> 0;
	x ^= x >>> 15;
	x = Math.imul(x, 0x846ca68b) >>> 0;
	x ^= x >>> 16;
	// stdlib's MT19937 wants a seed in [1, 2^32 − 1].
	return x >>> 0 || 1;
}

/** The seeded stream `label` of master `seed`; the same arguments always give the same draws. */
export function stream(seed: number, label: string): Stream {
	const s = subSeed(seed, label);
	const xs = new XSadd(s);
	const norm = normalBase.factory(0, 1, { seed: s });
	return {
		uniform: () => xs.random(),
		normal: () => norm(),
		between: (lo, hi) => lo + (hi - lo) * xs.random(),
		int: (lo, hi) => lo + Math.floor((hi - lo + 1) * xs.random())
	};
}
