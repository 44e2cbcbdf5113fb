/**
 * A small fab for the screen repositories' tests: one area, one tool, three chambers running one
 * recipe step whose features are ten OES channels at known emission lines plus two tool sensors.
 * Golden wafers build and approve a baseline per chamber; new wafers are scored through the real
 * scoring path (rollups, alarms). Chamber CH2 then gets an invented air leak: the N2 band channels
 * (337.1, 357.7, 380.5 nm; Pearse & Gaydon 1976) rise far outside their golden spread.
 */
import type { Knex } from 'knex';
import { XSadd as XSAdd } from 'ml-xsadd';
import { approveBaseline, createDraftBaseline } from '../../../src/lib/server/baselines.ts';
import { encodeValues } from '../../../src/lib/server/feature-values.ts';
import { scoreWaferSteps } from '../../../src/lib/server/scoring.ts';
import { createUser } from '../../../src/lib/server/users.ts';

const idOf = (r: unknown) => (typeof r === 'object' && r !== null ? (r as { id: number }).id : (r as number));

export const WAVELENGTHS = [337.1, 357.7, 380.5, 500.0, 587.6, 656.3, 703.7, 750.4, 777.4, 844.6];
export const SENSORS = [
	{ name: 'pressure_mtorr', unit: 'mTorr' },
	{ name: 'rf_forward_w', unit: 'W' }
];
export const N2 = ['oes_337.1', 'oes_357.7', 'oes_380.5'];
export const HOUR = 3_600_000;
/** The fab's wafers start here; golden wafers run the first day, production the next two. */
export const T0 = Date.UTC(2026, 10, 20, 0, 0);

function rows(n: number, seed: number, leak = 0): Float64Array[] {
	const rng = new XSAdd(seed);
	const g = () => Math.sqrt(-2 * Math.log(Math.max(rng.random(), 1e-12))) * Math.cos(2 * Math.PI * rng.random());
	const out: Float64Array[] = [];
	for (let i = 0; i < n; i++) {
		const ne = g(); // electron density: moves every line together
		const x = new Float64Array(WAVELENGTHS.length + SENSORS.length);
		WAVELENGTHS.forEach((_, j) => (x[j] = 1000 + 40 * j + 30 * ne + 5 * g()));
		x[10] = 30 + 0.2 * g();
		x[11] = 800 + 2 * ne + g();
		if (leak) for (const j of [0, 1, 2]) x[j] += leak * (1 + 0.05 * g());
		out.push(x);
	}
	return out;
}

export async function buildSmallFab(k: Knex) {
	const [area] = await k('areas').insert({ code: 'ET', name: 'Etch' }).returning('id');
	const [tool] = await k('tools').insert({ code: 'ET01', name: 'Etcher 1', area_id: idOf(area) }).returning('id');
	const chambers: { id: number; code: string }[] = [];
	for (const l of ['1', '2', '3']) {
		const [c] = await k('chambers').insert({ code: `CH${l}`, name: `Chamber ${l}`, tool_id: idOf(tool), created_at: 0 }).returning('id');
		chambers.push({ id: idOf(c), code: `CH${l}` });
	}
	const [recipe] = await k('recipes').insert({ code: 'RX-1', name: 'Test recipe' }).returning('id');
	const [step] = await k('recipe_steps').insert({ recipe_id: idOf(recipe), name: 'main', position: 1 }).returning('id');
	const recipeStepId = idOf(step);
	await k('features').insert([
		...WAVELENGTHS.map((nm, j) => ({ recipe_step_id: recipeStepId, set_version: 1, position: j, name: `oes_${nm.toFixed(1)}`, kind: 'oes', wavelength_nm: nm, unit: 'counts' })),
		...SENSORS.map((s, i) => ({ recipe_step_id: recipeStepId, set_version: 1, position: WAVELENGTHS.length + i, name: s.name, kind: 'sensor', unit: s.unit }))
	]);
	const user = (await createUser({ username: 'view-eng', displayName: 'View Engineer', password: 'view-engineer-pw', role: 'engineer' }, k)).id;

	const insert = async (chamberId: number, xs: Float64Array[], start: number, every: number, prefix: string, golden: boolean) => {
		const out: { id: number; processedAt: number; values: Float64Array }[] = [];
		for (let i = 0; i < xs.length; i++) {
			const processedAt = start + i * every;
			const [r] = await k('wafer_steps')
				.insert({ wafer_id: `${prefix}-${String(i).padStart(3, '0')}`, lot_id: `${prefix}-L${Math.floor(i / 25)}`, slot: (i % 25) + 1, chamber_id: chamberId, recipe_step_id: recipeStepId, processed_at: processedAt, golden, feature_set_version: 1, feature_values: encodeValues(xs[i]), rf_on_s: 60, created_at: processedAt })
				.returning('id');
			out.push({ id: idOf(r), processedAt, values: xs[i] });
		}
		return out;
	};
	const score = (chamberId: number, ws: { id: number; processedAt: number; values: Float64Array }[]) =>
		k.transaction((trx) => scoreWaferSteps(trx, ws.map((w) => ({ id: w.id, chamberId, recipeStepId, processedAt: w.processedAt, featureSetVersion: 1, values: w.values }))));

	const baselines: number[] = [];
	for (const [i, c] of chambers.entries()) {
		const golden = await insert(c.id, rows(60, 100 + i), T0, 10 * 60_000, `G${c.code}`, true);
		const d = await createDraftBaseline({ chamberId: c.id, recipeStepId, waferStepIds: golden.map((g) => g.id), components: 2, builtBy: user }, k);
		await approveBaseline(d.id, user, k);
		baselines.push(d.id);
	}
	// Production: 48 h from T0 + 24 h, one wafer every 15 min per chamber; CH2 leaks from hour 36.
	const start = T0 + 24 * HOUR;
	const prod: Record<string, { id: number; processedAt: number; values: Float64Array }[]> = {};
	for (const [i, c] of chambers.entries()) {
		const normal = rows(192, 200 + i);
		if (c.code === 'CH2') for (let j = 144; j < 192; j++) normal[j] = rows(1, 300 + j, 400 + (j - 144) * 20)[0];
		prod[c.code] = await insert(c.id, normal, start, 15 * 60_000, `P${c.code}`, false);
		await score(c.id, prod[c.code]);
	}
	return { chambers, recipeStepId, user, baselines, prod, start, end: start + 48 * HOUR };
}
