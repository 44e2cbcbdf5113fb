/**
 * The drift statistic's in-control ARL against its design, on skewed (χ²_h) ratios, independent and
 * with lot-to-lot correlation: many reference sets (the law and ACF fitted to each), their spread.
 *
 *   node --import tsx bench/drift-arl.ts [--sets 20] [--runs 100] [--arl 1000]
 */
import { driftRunLengths } from '../tests/helpers/drift-arl.ts';

const arg = (name: string, dflt: number) => {
	const i = process.argv.indexOf(`--${name}`);
	return i > 0 ? Number(process.argv[i + 1]) : dflt;
};
const sets = arg('sets', 20);
const runs = arg('runs', 100);
const arl = arg('arl', 1000);
console.log(`design ARL ${arl} per chart, λ = 0.2, scores capped at 3, law from 3,000 reference wafers; ${sets} reference sets × ${runs} run lengths each`);
console.log('| h | lot offset (σ) | mean ARL | ÷ design | spread over sets (min–max) | mean Zhang F |');
console.log('|---|---|---|---|---|---|');
for (const h of [1, 3, 10])
	for (const lotSd of [0, 0.35, 0.7]) {
		const rs = Array.from({ length: sets }, (_, i) => driftRunLengths({ h, lotSd, arl, runs, reference: 3000, seed: 10_000 * h + 1000 * Math.round(lotSd * 100) + i }));
		const means = rs.map((r) => r.mean);
		const mean = means.reduce((a, b) => a + b, 0) / sets;
		const F = rs.reduce((a, r) => a + r.factor, 0) / sets;
		console.log(`| ${h} | ${lotSd} | ${mean.toFixed(0)} | ${(mean / arl).toFixed(2)} | ${Math.min(...means).toFixed(0)}–${Math.max(...means).toFixed(0)} | ${F.toFixed(2)} |`);
	}
