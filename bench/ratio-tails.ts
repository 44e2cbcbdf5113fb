/**
 * How far a fitted law can be trusted in the tail: out-of-sample T² and Q of new wafers against the
 * normal score under a two-moment χ² (mean, sd) and the three-moment shifted χ² (mean, sd, skewness)
 * fitted to 800 earlier wafers (drift.ts). 3 latent factors, lots of 25 with offsets, 100 golden
 * wafers, 10 golden sets × 19,200 new wafers per p.
 *
 *   node --import tsx bench/ratio-tails.ts
 */
import { XSadd as XSAdd } from 'ml-xsadd';
import { fitBaseline, scoreBatch } from '../src/lib/monitoring/index.ts';
import { normalTail, ratioMoments, ratioShape, scoreScale, shiftedChiSquare } from '../src/lib/monitoring/drift.ts';

const gauss = (r: XSAdd) => {
	const u = Math.max(r.random(), 1e-12);
	return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * r.random());
};
console.log('| p | statistic | P(z > 4) two-moment | three-moment | normal | P(z > 2.28) two-moment | three-moment | normal |');
console.log('|---|---|---|---|---|---|---|---|');
for (const p of [12, 40]) {
	const loads = new XSAdd(1000);
	const W = [0, 1, 2].map(() => Array.from({ length: p }, () => loads.random() * 2 - 1));
	for (const stat of ['t2', 'q'] as const) {
		const sums = [0, 0, 0, 0];
		for (let rep = 0; rep < 10; rep++) {
			const rng = new XSAdd(rep + 7);
			let off = [0, 0, 0];
			let inLot = 0;
			const row = () => {
				if (inLot === 0) off = off.map(() => 0.35 * gauss(rng));
				inLot = (inLot + 1) % 25;
				const f = off.map((o) => o + gauss(rng));
				return Float64Array.from({ length: p }, (_, j) => 10 + f[0] * W[0][j] + f[1] * W[1][j] + f[2] * W[2][j] + 0.1 * gauss(rng));
			};
			const model = fitBaseline(Array.from({ length: 100 }, row), { featureNames: Array.from({ length: p }, (_, j) => `f${j}`), components: 3 });
			const s = scoreBatch(model, Array.from({ length: 20_000 }, row));
			const x = Array.from(s[stat]);
			const ref = x.slice(0, 800);
			const test = x.slice(800);
			const m = ratioMoments(ref);
			const two = scoreScale({ a: 0, g: m.mean / ratioShape(m.mean, m.sd), h: ratioShape(m.mean, m.sd) });
			const three = scoreScale(shiftedChiSquare(m));
			const share = (f: (r: number) => number, z: number) => test.filter((v) => f(v) > z).length / test.length;
			sums[0] += share(two.score, 4) / 10;
			sums[1] += share(three.score, 4) / 10;
			sums[2] += share(two.score, 2.28) / 10;
			sums[3] += share(three.score, 2.28) / 10;
		}
		console.log(`| ${p} | ${stat === 't2' ? 'T²' : 'Q'} | ${sums[0].toExponential(1)} | ${sums[1].toExponential(1)} | ${normalTail(4).toExponential(1)} | ${sums[2].toFixed(4)} | ${sums[3].toFixed(4)} | ${normalTail(2.28).toFixed(4)} |`);
	}
}
