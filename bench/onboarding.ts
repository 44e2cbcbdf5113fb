/**
 * A new fab's first day through the HTTP API only (issue 12's figure): a generated fab of 200
 * chambers × 6 recipe steps × 60 golden wafers is loaded into an empty installation (the built
 * server, `node build`, over a fresh data folder), its chambers registered by the data files, one
 * qualification campaign per step drafted, approved, rescored, and fleet matching run. Prints the
 * requests made (besides data files and progress polling; target ≤ 20), the wall time (target ≤ 10
 * minutes) and the server's peak resident memory (VmHWM).
 *
 * Run alone: node --import tsx bench/onboarding.ts   (needs `npm run build` first; bench/run.ts calls
 * runOnboardingBench()). LOCKSTEP_BENCH_CHAMBERS sets a smaller fleet (e.g. 20) for a quick look.
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { XSadd } from 'ml-xsadd';
import { createUser, signIn, startServer, type RunningServer } from '../tests/load/server.ts';
import type { BenchFigure } from './figure.ts';

const CHAMBERS = Number(process.env.LOCKSTEP_BENCH_CHAMBERS ?? 200);
const STEPS = ['breakthrough', 'main', 'overetch', 'strip', 'clean', 'season'];
const GOLDEN = 60;
const RECIPE = 'ONB-ETCH';
// golden wafers are a sample of production (a couple a lot): one every 10 minutes spans 10 h, so no
// draft carries the short-span warning and approve-all takes every draft
const EVERY = 10 * 60_000;
// 60 OES channels away from the actinometry lines (so no ratio is derived) and 4 tool sensors.
const FEATURES = [...Array.from({ length: 60 }, (_, j) => `oes_${(201.3 + 10 * j).toFixed(1)}`), 'pressure_mtorr', 'rf_forward_w', 'o2_flow_sccm', 'chuck_temp_c'];

const chamberCode = (i: number) => `ON${String(i + 1).padStart(3, '0')}`;

/** One CSV per recipe step: every chamber's 60 wafers, 3 latent process factors plus noise. */
function writeStepFile(dir: string, s: number, start: number): string {
	const file = path.join(dir, `onboarding-${STEPS[s]}.csv`);
	const rng = new XSadd(1000 + s);
	const gauss = () => Math.sqrt(-2 * Math.log(Math.max(rng.getFloat(), 1e-12))) * Math.cos(2 * Math.PI * rng.getFloat());
	const load = Array.from({ length: 3 }, () => FEATURES.map(() => rng.getFloat() * 2 - 1));
	const lines = [['wafer_id', 'lot_id', 'chamber_id', 'recipe', 'step', 'processed_at', ...FEATURES].join(',')];
	for (let c = 0; c < CHAMBERS; c++) {
		const offset = FEATURES.map(() => 0.3 * gauss()); // each chamber sits a little apart
		for (let i = 0; i < GOLDEN; i++) {
			const f = [gauss(), gauss(), gauss()];
			const at = new Date(start + i * EVERY + s * 20_000 + c * 1000).toISOString();
			const v = FEATURES.map((_, j) => (500 + 5 * j + offset[j] + f[0] * load[0][j] + f[1] * load[1][j] + f[2] * load[2][j] + 0.1 * gauss()).toFixed(3));
			lines.push([`W${chamberCode(c)}-${i}`, `L${chamberCode(c)}-${Math.floor(i / 25)}`, chamberCode(c), RECIPE, STEPS[s], at, ...v].join(','));
		}
	}
	fs.writeFileSync(file, lines.join('\n') + '\n');
	return file;
}

interface Counter {
	requests: number;
	data: number;
	polls: number;
}

async function call(srv: RunningServer, cookie: string, counter: Counter, kind: keyof Counter, p: string, init: { method?: string; json?: unknown; form?: Record<string, string>; body?: Buffer; type?: string } = {}) {
	counter[kind]++;
	const headers: Record<string, string> = { cookie, origin: srv.base, accept: 'application/json' };
	let body: BodyInit | undefined;
	if (init.json !== undefined) {
		headers['content-type'] = 'application/json';
		body = JSON.stringify(init.json);
	} else if (init.form) {
		headers['content-type'] = 'application/x-www-form-urlencoded';
		headers.accept = 'text/html';
		body = new URLSearchParams(init.form);
	} else if (init.body) {
		headers['content-type'] = init.type ?? 'text/csv';
		body = new Uint8Array(init.body);
	}
	const r = await fetch(`${srv.base}${p}`, { method: init.method ?? (body ? 'POST' : 'GET'), headers, body, redirect: 'manual' });
	const text = await r.text();
	let parsed: unknown = text;
	try {
		parsed = JSON.parse(text);
	} catch {
		/* a page answer */
	}
	return { status: r.status, body: parsed as Record<string, unknown> };
}

function peakRssMb(pid: number | undefined): number {
	try {
		const m = /VmHWM:\s+(\d+) kB/.exec(fs.readFileSync(`/proc/${pid}/status`, 'utf8'));
		return m ? Number(m[1]) / 1024 : NaN;
	} catch {
		return NaN;
	}
}

export async function runOnboardingBench(): Promise<BenchFigure[]> {
	const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'lockstep-onboarding-'));
	const start = Date.now() - 2 * 86_400_000;
	const files = STEPS.map((_, s) => writeStepFile(dir, s, start));
	createUser(dir, 'onb-admin', 'admin', 'onboarding-password-1', 'Onboarding admin');
	const srv = await startServer(dir);
	const n: Counter = { requests: 0, data: 0, polls: 0 };
	const t0 = performance.now();
	const notes: string[] = [];
	try {
		n.requests++;
		const cookie = await signIn(srv.base, 'onb-admin', 'onboarding-password-1');
		// Registration: the data files register their chambers. Today that is the admin ingest policy
		// "auto-register for admins" (one request); an ingest token with the `register` permission does
		// the same for a tool host.
		const pol = await call(srv, cookie, n, 'requests', '/admin/policy?/ingest', { form: { unknownChamber: 'auto_register_for_admins' } });
		if (pol.status !== 200) throw new Error(`ingest policy: ${pol.status}`);
		for (const f of files) {
			const r = await call(srv, cookie, n, 'data', `/api/ingest?name=${encodeURIComponent(path.basename(f))}`, { body: fs.readFileSync(f) });
			if (r.status >= 300) throw new Error(`ingest ${f}: ${r.status} ${JSON.stringify(r.body).slice(0, 400)}`);
			if (process.env.LOCKSTEP_BENCH_VERBOSE) console.log(`onboarding: ${r.status} ${String(r.body.summary)}`);
		}
		const tIngest = performance.now();
		const ids: number[] = [];
		for (const step of STEPS) {
			const r = await call(srv, cookie, n, 'requests', '/api/qualifications', { json: { recipe: RECIPE, step, golden: { from: new Date(start - 60_000).toISOString(), to: new Date().toISOString() } } }).catch((e) => {
				throw new Error(`campaign ${step} (after ${ids.length}): ${e}`, { cause: e });
			});
			if (r.status !== 202) throw new Error(`campaign ${step}: ${r.status} ${JSON.stringify(r.body)}`);
			ids.push(Number(r.body.id));
		}
		const waitFor = async (id: number, done: (b: Record<string, unknown>) => boolean) => {
			for (;;) {
				const r = await call(srv, cookie, n, 'polls', `/api/qualifications/${id}`);
				if (r.status !== 200) throw new Error(`poll ${id}: ${r.status}`);
				if (done(r.body)) return r.body;
				await new Promise((res) => setTimeout(res, 1000));
			}
		};
		let drafted = 0;
		let screened = 0;
		let warned = 0;
		for (const id of ids) {
			const b = await waitFor(id, (x) => x.state !== 'drafting');
			const drafts = b.drafts as { state: string; screenedOut: unknown[]; warnings: unknown[] }[];
			drafted += drafts.filter((d) => d.state === 'drafted').length;
			screened += drafts.reduce((s, d) => s + d.screenedOut.length, 0);
			warned += drafts.filter((d) => d.warnings.length > 0).length;
		}
		const tDraft = performance.now();
		let approved = 0;
		for (const id of ids) {
			// the contract's default: every draft without warnings
			const r = await call(srv, cookie, n, 'requests', `/api/qualifications/${id}/approve`, { json: {} });
			if (r.status !== 200) throw new Error(`approve ${id}: ${r.status} ${JSON.stringify(r.body)}`);
			approved += (r.body.approved as unknown[]).length;
		}
		for (const id of ids) await waitFor(id, (x) => (x.progress as { rescoring: number }).rescoring === 0);
		const tRescore = performance.now();
		const m = await call(srv, cookie, n, 'requests', '/api/matching', { json: {} });
		if (m.status >= 300) notes.push(`fleet matching: POST /api/matching answered ${m.status}${m.status === 404 ? " (not built in this tree yet)" : ` (${JSON.stringify(m.body).slice(0, 200)})`}`);
		const tEnd = performance.now();
		const peak = peakRssMb(srv.proc.pid);
		console.log(
			`onboarding: ${CHAMBERS} chambers × ${STEPS.length} steps × ${GOLDEN} wafers: ingest ${((tIngest - t0) / 1000).toFixed(1)} s, drafting ${((tDraft - tIngest) / 1000).toFixed(1)} s (${drafted} drafts, ${screened} wafers screened out, ${warned} with warnings), approval + rescore ${((tRescore - tDraft) / 1000).toFixed(1)} s (${approved} approved), matching ${((tEnd - tRescore) / 1000).toFixed(1)} s; ${n.requests} requests + ${n.data} data files + ${n.polls} polls`
		);
		for (const note of notes) console.log(`onboarding: ${note}`);
		return [
			{ name: `onboarding ${CHAMBERS}×${STEPS.length}×${GOLDEN}: wall time`, value: (tEnd - t0) / 60_000, unit: 'min', target: '≤ 10' },
			{ name: 'onboarding: requests (besides data files and polling)', value: n.requests, unit: 'requests', target: '≤ 20' },
			{ name: 'onboarding: baselines approved', value: approved, unit: 'baselines', target: `${CHAMBERS * STEPS.length}` },
			{ name: 'onboarding: server peak RSS', value: peak, unit: 'MB' }
		];
	} catch (e) {
		const health = await fetch(`${srv.base}/api/health`).then((r) => r.status).catch((x) => String(x));
		console.error(`onboarding: failed; server exit code ${srv.proc.exitCode}, health ${health}; the server said:\n${srv.log().slice(-3000)}`);
		throw e;
	} finally {
		await srv.stop();
		fs.rmSync(dir, { recursive: true, force: true });
	}
}

if (process.argv[1] && pathToFileURL(process.argv[1]).href === import.meta.url) {
	runOnboardingBench()
		.then((rows) => {
			for (const r of rows) console.log(`${r.name}: ${r.value.toFixed(2)} ${r.unit}${r.target ? ` (target ${r.target})` : ''}`);
		})
		.catch((e) => {
			console.error(e);
			process.exitCode = 1;
		});
}
