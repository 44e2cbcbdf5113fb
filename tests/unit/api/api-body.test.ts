/** Reading an API request's JSON body: the content type, the size and where broken JSON breaks. */
import { describe, expect, it } from 'vitest';
import { API_JSON_LIMIT_BYTES, lineColumn, readJsonBody } from '../../../src/lib/server/api-body.ts';
import { jsonErrorOffset } from '../../../src/lib/server/json-error-offset.ts';

const post = (body: string, type = 'application/json') => new Request('http://x/api/chambers', { method: 'POST', headers: { 'content-type': type }, body });

describe('readJsonBody', () => {
	it('parses JSON sent as application/json (with a charset)', async () => {
		expect(await readJsonBody(post('{"code":"A1"}', 'application/json; charset=utf-8'))).toEqual({ ok: true, value: { code: 'A1' } });
	});
	it('answers 415 naming the content type it got', async () => {
		const r = await readJsonBody(post('code=A1', 'application/x-www-form-urlencoded'));
		expect(r.ok).toBe(false);
		if (r.ok) return;
		expect(r.response.status).toBe(415);
		expect((await r.response.json()).error).toContain('application/x-www-form-urlencoded');
	});
	it('answers 400 with the line and column where the JSON breaks', async () => {
		const r = await readJsonBody(post('{\n  "code": "A1",\n  "tool": ,\n}'));
		if (r.ok) throw new Error('accepted broken JSON');
		expect(r.response.status).toBe(400);
		expect((await r.response.json()).location).toEqual({ file: null, line: 3, column: 11 });
	});
	it('answers 413 beyond the limit', async () => {
		const r = await readJsonBody(post(`"${'x'.repeat(API_JSON_LIMIT_BYTES)}"`));
		if (r.ok) throw new Error('accepted an oversize body');
		expect(r.response.status).toBe(413);
	});
	it('counts lines and columns from 1', () => {
		expect(lineColumn('ab\ncd', 0)).toEqual({ line: 1, column: 1 });
		expect(lineColumn('ab\ncd', 4)).toEqual({ line: 2, column: 2 });
	});
});

describe('jsonErrorOffset', () => {
	it('finds nothing wrong in valid JSON (checked against JSON.parse)', () => {
		for (const t of ['{}', '[]', ' {"a":[1,-2.5e3,true,false,null,"x\\"\\u00e9"]} ', '"s"', '0', '{"a":{"b":[{}]}}']) {
			expect(() => JSON.parse(t), t).not.toThrow();
			expect(jsonErrorOffset(t), t).toBeNull();
		}
	});
	it('points at the first character that breaks the text (each also refused by JSON.parse)', () => {
		const cases: [string, number][] = [
			['{"a": ,}', 6],
			['{"a":1,}', 7],
			['[1 2]', 3],
			['{a:1}', 1],
			['{"a":01}', 6],
			['{"a":tru}', 8],
			['{"a":"x', 7],
			['{"a":1}}', 7],
			['', 0],
			['{"a":"\\q"}', 7]
		];
		for (const [t, at] of cases) {
			expect(() => JSON.parse(t), t).toThrow();
			expect(jsonErrorOffset(t), t).toBe(at);
		}
	});
});
