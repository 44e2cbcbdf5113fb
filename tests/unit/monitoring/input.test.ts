import { describe, expect, it } from 'vitest';
import {
	contributions,
	deserializeModel,
	fitBaseline,
	modelFromBlob,
	modelToBlob,
	MonitoringInputError,
	rowFromRecord,
	scoreBatch,
	scoreWafer,
	serializeModel
} from '../../../src/lib/monitoring';
import { seededNormal } from './helpers';

const g = seededNormal(11);
const featureNames = ['rf_w', 'pressure_mtorr', 'cl2_sccm', 'he_torr', 'oes_777.4'];
const rows = Array.from({ length: 30 }, () => featureNames.map((_, j) => 10 * (j + 1) + g()));
const model = fitBaseline(rows, { featureNames, components: 2 });

function thrown(fn: () => unknown): MonitoringInputError {
	try {
		fn();
	} catch (e) {
		if (e instanceof MonitoringInputError) return e;
		throw e;
	}
	throw new Error('expected a MonitoringInputError');
}

describe('bad input is refused with the feature and row named (the engine never imputes)', () => {
	it('NaN in a golden row', () => {
		const bad = rows.map((r) => [...r]);
		bad[7][2] = NaN;
		const e = thrown(() => fitBaseline(bad, { featureNames }));
		expect(e.feature).toBe('cl2_sccm');
		expect(e.row).toBe(7);
		expect(e.message).toMatch(/cl2_sccm.*row 7.*NaN/);
	});
	it('a missing value (hole in a number[]) and Infinity when scoring', () => {
		const x = [...rows[0]];
		delete (x as unknown as Record<number, number>)[3];
		expect(thrown(() => scoreWafer(model, x)).message).toMatch(/he_torr.*missing/);
		const y = [...rows[0]];
		y[0] = Infinity;
		expect(thrown(() => contributions(model, y)).feature).toBe('rf_w');
	});
	it('non-finite value inside a flat batch names the row', () => {
		const flat = Float64Array.from([...rows[0], ...rows[1]]);
		flat[5 + 4] = -Infinity;
		const e = thrown(() => scoreBatch(model, flat));
		expect(e.row).toBe(1);
		expect(e.feature).toBe('oes_777.4');
	});
	it('wrong row length, duplicate names, too few rows, impossible k', () => {
		expect(thrown(() => scoreWafer(model, [1, 2, 3])).message).toMatch(/3 values, expected 5/);
		expect(() => fitBaseline(rows, { featureNames: ['a', 'a', 'b', 'c', 'd'] })).toThrow(/appears twice/);
		expect(() => fitBaseline(rows.slice(0, 2), { featureNames })).toThrow(MonitoringInputError);
		expect(() => fitBaseline(rows, { featureNames, components: 5 })).toThrow(/components = 5/);
		expect(() => fitBaseline(rows.slice(0, 6), { featureNames, components: 5 })).toThrow(/n − 2/);
		expect(() => fitBaseline(rows, { featureNames, alpha: 0.2, warningAlpha: 0.05 })).toThrow(RangeError);
	});
	it('rowFromRecord names the absent feature', () => {
		const rec = Object.fromEntries(featureNames.map((f, j) => [f, rows[0][j]]));
		expect(Array.from(rowFromRecord(model, rec))).toEqual(rows[0]);
		delete rec['pressure_mtorr'];
		expect(thrown(() => rowFromRecord(model, rec)).feature).toBe('pressure_mtorr');
	});
});

describe('near-zero golden variance', () => {
	const flat = rows.map((r) => [...r.slice(0, 4), 750]);
	const m = fitBaseline(flat, { featureNames, components: 2 });
	// 750 written without decimals: its resolution is 1 count, so the scale is floored at 1 (not at
	// 750e-6, where one count would have added 1.8e6 to Q).
	it('floors the scale at the feature\'s resolution, flags the feature and records the treatment', () => {
		expect(m.lowVarianceFeatures).toEqual([
			{ feature: 'oes_777.4', index: 4, sd: 0, floor: 1, treatment: 'scale-floored', resolution: 1 }
		]);
		expect(m.scale[4]).toBe(1);
		expect(m.scaleFloor).toEqual({ relative: 1e-6, absolute: 1e-9, resolution: true });
		const s = scoreWafer(m, [...flat[0].slice(0, 4), 750]);
		expect(Number.isFinite(s.t2) && Number.isFinite(s.q)).toBe(true);
	});
	it('one quantisation step adds at most 1 to Q; a move of 30 steps is loud in Q', () => {
		const base = scoreWafer(m, [...flat[0].slice(0, 4), 750]);
		const step = scoreWafer(m, [...flat[0].slice(0, 4), 751]);
		expect(step.q - base.q).toBeLessThanOrEqual(1 + 1e-9);
		expect(step.q - base.q).toBeGreaterThan(0);
		expect(scoreWafer(m, [...flat[0].slice(0, 4), 780]).qRatio).toBeGreaterThan(1);
	});
	it('without the resolution floor (older models) one 0.01 step is enormous: the reason for the floor', () => {
		const old = fitBaseline(flat, { featureNames, components: 2, scaleFloor: { resolution: false } });
		expect(old.scale[4]).toBe(750e-6);
		expect(scoreWafer(old, [...flat[0].slice(0, 4), 750.01]).q).toBeGreaterThan(100);
	});
	it('keeps the recorded treatment through serialization', () => {
		expect(deserializeModel(serializeModel(m)).lowVarianceFeatures).toEqual(m.lowVarianceFeatures);
	});
});

describe('model serialization', () => {
	const big = fitBaseline(
		Array.from({ length: 40 }, () => Array.from({ length: 60 }, () => g())),
		{ featureNames: Array.from({ length: 60 }, (_, j) => `oes_${300 + j}`), components: 4 }
	);
	const x = Array.from({ length: 60 }, () => 2 * g());
	it('JSON round trip is exact', () => {
		const back = deserializeModel(serializeModel(big));
		expect(back).toEqual(big);
		expect(scoreWafer(back, x)).toEqual(scoreWafer(big, x));
	});
	it('binary blob round trip is bit-exact and smaller than JSON', () => {
		const blob = modelToBlob(big);
		const back = modelFromBlob(blob);
		expect(back).toEqual(big);
		expect(blob.length).toBeLessThan(serializeModel(big).length);
		expect(modelFromBlob(Buffer.from(blob))).toEqual(big);
	});
	it('a damaged blob or model text is refused', () => {
		const blob = modelToBlob(big);
		const bad = blob.slice();
		bad[bad.length - 3] ^= 0x40;
		expect(() => modelFromBlob(bad)).toThrow(/checksum/);
		expect(() => modelFromBlob(blob.subarray(0, 100))).toThrow(MonitoringInputError);
		expect(() => modelFromBlob(new Uint8Array(20))).toThrow(/magic/);
		expect(() => deserializeModel('{"format":"other"}')).toThrow(/format/);
		expect(() => deserializeModel('{nope')).toThrow(/JSON/);
		const o = JSON.parse(serializeModel(big));
		o.loadings.pop();
		expect(() => deserializeModel(o)).toThrow(/loadings has 239 values, expected 240/);
	});
});

describe('model text with wrong fields is refused with the field named', () => {
	const text = serializeModel(model);
	it.each([
		['limits', (o: Record<string, any>) => (o.limits.q = -1), /limits\.q must be a positive number/],
		['scaling', (o: Record<string, any>) => (o.scaling = 'zscore'), /unknown scaling/],
		['qMethod', (o: Record<string, any>) => (o.qMethod = 'magic'), /unknown Q method/],
		['alpha', (o: Record<string, any>) => delete o.alpha, /model\.alpha/],
		['featureNames', (o: Record<string, any>) => o.featureNames.pop(), /featureNames must have p entries/]
	])('%s', (_f, mutate, message) => {
		const o = JSON.parse(text);
		mutate(o);
		expect(() => deserializeModel(o)).toThrow(message);
	});
});
