/**
 * Benchmarks of the monitoring engine (src/lib/monitoring): baseline fit of 200 golden wafers ×
 * 2,048 features by both PCA routes, and scoring throughput at 512 features, k = 10, on one core;
 * with the same work done by numpy when python3 + numpy are present.
 *
 * Run alone: node --import tsx bench/engine.ts   (bench/run.ts calls runEngineBench()).
 * Figures are best-of-n wall-clock times on this machine; numpy runs with one BLAS thread.
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { XSadd } from 'ml-xsadd';
import type { BenchFigure } from './figure.ts';
import { fitBaseline, scoreBatch, scoreWafer } from '../src/lib/monitoring/index';


/** Seeded data: `factors` latent factors through random loadings plus unit noise, n × p flat. */
function latentData(seed: number, n: number, p: number, factors: number): Float64Array {
	const rng = new XSadd(seed);
	let spare: number | null = null;
	const normal = () => {
		// Marsaglia polar method on XSadd uniforms.
		if (spare !== null) {
			const s = spare;
			spare = null;
			return s;
		}
		let u = 0;
		let v = 0;
		let s = 0;
		do {
			u = 2 * rng.getFloat() - 1;
			v = 2 * rng.getFloat() - 1;
			s = u * u + v * v;
		} while (s >= 1 || s === 0);
		const f = Math.sqrt((-2 * Math.log(s)) / s);
		spare = v * f;
		return u * f;
	};
	const W = Float64Array.from({ length: factors * p }, () => 3 * normal());
	const X = new Float64Array(n * p);
	const t = new Float64Array(factors);
	for (let i = 0; i < n; i++) {
		for (let a = 0; a < factors; a++) t[a] = normal();
		for (let j = 0; j < p; j++) {
			let v = 1000 + j + normal();
			for (let a = 0; a < factors; a++) v += W[a * p + j] * t[a];
			X[i * p + j] = v;
		}
	}
	return X;
}

function rowsOf(X: Float64Array, n: number, p: number): Float64Array[] {
	return Array.from({ length: n }, (_, i) => X.subarray(i * p, (i + 1) * p));
}

function bestMs(fn: () => void, repeat: number): number {
	let best = Infinity;
	for (let r = 0; r < repeat; r++) {
		const t = performance.now();
		fn();
		best = Math.min(best, performance.now() - t);
	}
	return best;
}

interface NumpyFigures {
	numpy: string;
	fitSvdMs: number;
	fitGramMs: number;
	scoreWafersPerSecond: number;
}

function runNumpy(fit: Float64Array, n: number, p: number, score: Float64Array, m: number, p2: number, k: number): NumpyFigures | null {
	const dir = mkdtempSync(join(tmpdir(), 'lockstep-bench-'));
	try {
		const fitPath = join(dir, 'fit.f64');
		const scorePath = join(dir, 'score.f64');
		// Typed arrays are little-endian on every platform Node supports here (x86-64, arm64).
		writeFileSync(fitPath, new Uint8Array(fit.buffer, fit.byteOffset, fit.byteLength));
		writeFileSync(scorePath, new Uint8Array(score.buffer, score.byteOffset, score.byteLength));
		const script = fileURLToPath(new URL('./engine_numpy.py', import.meta.url));
		const one = { OMP_NUM_THREADS: '1', OPENBLAS_NUM_THREADS: '1', MKL_NUM_THREADS: '1' };
		const r = spawnSync('python3', [script, fitPath, String(n), String(p), scorePath, String(m), String(p2), String(k)], {
			encoding: 'utf8',
			env: { ...process.env, ...one },
			timeout: 300_000
		});
		if (r.status !== 0) return null;
		return JSON.parse(r.stdout.trim().split('\n').pop()!) as NumpyFigures;
	} catch {
		return null;
	} finally {
		rmSync(dir, { recursive: true, force: true });
	}
}

/**
 * Run the engine benchmarks.
 *
 * @returns one figure per measurement; `numpy` holds numpy's figure for the same work when python3
 *   with numpy is available
 */
export async function runEngineBench(): Promise<BenchFigure[]> {
	const n = 200;
	const p = 2048;
	const k = 10;
	const fitData = latentData(1, n, p, 12);
	const fitRows = rowsOf(fitData, n, p);
	const featureNames = Array.from({ length: p }, (_, j) => `oes_${(200 + (800 * j) / p).toFixed(2)}`);
	// The decomposition and limit arithmetic alone (what numpy is compared with): theory limits. The
	// default fit adds the cross-validation behind the limits (20 refits here), timed once below.
	fitBaseline(fitRows, { featureNames, components: k, route: 'gram', limits: 'theory' }); // warm-up (JIT)
	const gramMs = bestMs(() => fitBaseline(fitRows, { featureNames, components: k, route: 'gram', limits: 'theory' }), 3);
	const svdMs = bestMs(() => fitBaseline(fitRows, { featureNames, components: k, route: 'svd', limits: 'theory' }), 2);
	const cvMs = bestMs(() => fitBaseline(fitRows, { featureNames, components: k, route: 'gram' }), 1);

	const p2 = 512;
	const m = 20_000;
	const names2 = featureNames.slice(0, p2);
	const golden = latentData(2, 200, p2, 12);
	const model = fitBaseline(rowsOf(golden, 200, p2), { featureNames: names2, components: k });
	const wafers = latentData(3, m, p2, 12);
	scoreBatch(model, wafers); // warm-up
	const batchMs = bestMs(() => scoreBatch(model, wafers), 5);
	const waferRows = rowsOf(wafers, m, p2);
	const singleMs = bestMs(() => {
		for (const x of waferRows) scoreWafer(model, x);
	}, 3);

	const np = runNumpy(fitData, n, p, wafers, m, p2, k);
	const figures: BenchFigure[] = [
		{ name: 'fit 200 × 2,048, k = 10, Gram route (default)', value: gramMs, unit: 'ms', target: '< 1000 ms', numpy: np?.fitGramMs },
		{ name: 'fit 200 × 2,048, k = 10, SVD route (QR + SVD)', value: svdMs, unit: 'ms', target: '< 1000 ms', numpy: np?.fitSvdMs },
		{ name: 'fit 200 × 2,048, k = 10, with cross-validated limits (20 refits)', value: cvMs, unit: 'ms', target: '< 15000 ms' },
		{ name: 'scoreBatch, 512 features, k = 10, one core (T², Q, φ)', value: (m / batchMs) * 1000, unit: 'wafers/s', target: '≥ 50,000 wafers/s', numpy: np?.scoreWafersPerSecond },
		{ name: 'scoreWafer one by one, 512 features, k = 10 (full detail)', value: (m / singleMs) * 1000, unit: 'wafers/s', target: '≥ 50,000 wafers/s', numpy: np?.scoreWafersPerSecond }
	];
	return figures;
}

function printTable(figures: BenchFigure[]): void {
	const fmt = (v: number | undefined, unit: string) =>
		v === undefined ? '—' : unit === 'ms' ? `${v.toFixed(1)} ms` : `${Math.round(v).toLocaleString('en-US')} ${unit}`;
	console.log('Lockstep monitoring engine benchmarks (node ' + process.version + ')');
	console.log(['measurement'.padEnd(60), 'Lockstep'.padStart(18), 'target'.padStart(20), 'numpy'.padStart(18), 'ratio'.padStart(8)].join(' '));
	for (const f of figures) {
		// ratio > 1 means Lockstep is slower than numpy (time) or numpy faster (throughput)
		const ratio = f.numpy === undefined ? '—' : (f.unit === 'ms' ? f.value / f.numpy : f.numpy / f.value).toFixed(2) + '×';
		console.log([f.name.padEnd(60), fmt(f.value, f.unit).padStart(18), (f.target ?? '').padStart(20), fmt(f.numpy, f.unit).padStart(18), ratio.padStart(8)].join(' '));
	}
	console.log('ratio = how many times numpy is faster (one BLAS thread); — = python3/numpy not found');
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
	printTable(await runEngineBench());
}
