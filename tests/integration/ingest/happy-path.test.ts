import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../../helpers/temp-db.ts';
import { ingestFile } from '../../../src/lib/server/ingest/index.ts';
import { decodeValues } from '../../../src/lib/server/feature-values.ts';
import { addChambers, count, csv, HEADER, OES_NM, rows, values, write } from './helpers.ts';

let env: Awaited<ReturnType<typeof useTempDb>>;
beforeAll(async () => {
	env = await useTempDb();
	await addChambers(env.k, ['PM1', 'PM2']);
});
afterAll(() => env.cleanup());

describe('ingest: a good file', () => {
	it('stores every row with its vector, rf_on_s and scoring state, and fixes the feature catalog', async () => {
		const file = write(env.dir, 'day1.csv', csv(HEADER, rows(40)));
		const r = await ingestFile(file, { source: 'inbox' });
		expect(r.status).toBe('done');
		expect(r.rows).toEqual({ total: 40, accepted: 40, rejected: 0, duplicate: 0 });
		expect(r.waferSteps).toEqual({ scored: 0, noBaseline: 40 });
		expect(r.created).toEqual({ recipes: ['OX-ETCH'], recipeSteps: ['OX-ETCH / main'], chambers: [] });
		expect(r.sha256).toMatch(/^[0-9a-f]{64}$/);

		const features = await env.k('features').orderBy('position');
		// 6 OES + 4 sensors measured, then the three actinometry ratios (Coburn & Chen 1980).
		expect(features.map((f) => f.name)).toEqual([
			...OES_NM.map((w) => `oes_${w}`),
			'rf_forward_w',
			'rf_reflected_w',
			'pressure_mtorr',
			'throttle_valve_pos',
			'ratio_O777_Ar750',
			'ratio_O845_Ar750',
			'ratio_F704_Ar750'
		]);
		expect(features.find((f) => f.name === 'oes_777.4')).toMatchObject({ kind: 'oes', wavelength_nm: 777.4 });
		expect(features.find((f) => f.name === 'pressure_mtorr')).toMatchObject({ kind: 'sensor', unit: 'mTorr' });
		expect(features.find((f) => f.name === 'throttle_valve_pos')).toMatchObject({ kind: 'sensor', unit: null });
		expect(features.find((f) => f.name === 'ratio_O777_Ar750')).toMatchObject({ kind: 'derived' });

		const ws = await env.k('wafer_steps').where({ wafer_id: 'W00007' }).first();
		expect(ws.scoring_state).toBe('no_baseline');
		expect(ws.rf_on_s).toBe(42.5);
		expect(ws.lot_id).toBe('L0');
		expect(Number(ws.processed_at)).toBe(Date.UTC(2026, 10, 1, 6, 0, 0) + 7 * 120_000);
		const v = decodeValues(ws.feature_values);
		const expected = values(7);
		expect(Array.from(v.slice(0, 10))).toEqual(expected);
		// ratio = I(777.4) / I(750.4): channels 4 and 3
		expect(v[10]).toBeCloseTo(expected[4] / expected[3], 12);
		expect(v[11]).toBeCloseTo(expected[5] / expected[3], 12);
		expect(v[12]).toBeCloseTo(expected[2] / expected[3], 12);

		const f = await env.k('ingest_files').where({ id: r.fileId }).first();
		expect(f).toMatchObject({ status: 'done', rows_total: 40, rows_accepted: 40, source: 'inbox', original_name: 'day1.csv' });
		expect(JSON.parse(f.report_json).summary).toBe(r.summary);
	});

	it('maps a later file with the same features in another order onto the catalog', async () => {
		const order = [...HEADER].reverse();
		const src = rows(5, 100);
		const reordered = src.map((r) => order.map((name) => r[HEADER.indexOf(name)]));
		const r = await ingestFile(write(env.dir, 'day2.csv', csv(order, reordered)), { source: 'upload' });
		expect(r.rows.accepted).toBe(5);
		const ws = await env.k('wafer_steps').where({ wafer_id: 'W00102' }).first();
		expect(Array.from(decodeValues(ws.feature_values).slice(0, 10))).toEqual(values(102));
	});

	it('accepts a BOM, CRLF line ends, quoted fields and a blank last line', async () => {
		const quoted = rows(3, 200).map((r) => r.map((c, j) => (j < 6 ? `"${c}"` : c)));
		const text = '\uFEFF' + csv(HEADER.map((h) => `"${h}"`), quoted, '\r\n') + '\r\n';
		const r = await ingestFile(write(env.dir, 'crlf.csv', text), { source: 'api' });
		expect(r.status).toBe('done');
		expect(r.rows).toMatchObject({ total: 3, accepted: 3 });
		expect(await env.k('wafer_steps').where({ wafer_id: 'W00201' }).first('lot_id')).toEqual({ lot_id: 'L8' });
	});

	it('takes JSON rows with the same fields', async () => {
		const objs = rows(2, 300).map((r) => Object.fromEntries(HEADER.map((h, j) => [h, j >= 6 ? Number(r[j]) : r[j]])));
		const r = await ingestFile(write(env.dir, 'rows.json', JSON.stringify({ rows: objs })), { source: 'api' });
		expect(r.rows).toMatchObject({ total: 2, accepted: 2 });
		expect(await count(env.k, 'wafer_steps')).toBe(40 + 5 + 3 + 2);
	});
});
