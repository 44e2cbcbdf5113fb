/**
 * Fab structure edits on an empty installation: create, rename, move, retire and restore areas, tools
 * and chambers; bulk registration as POST /api/chambers does it; a retired chamber keeps its history
 * and refuses new wafers; a registered chamber is assigned by a move.
 */
import fs from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { useTempDb } from '../../helpers/temp-db.ts';
import { addEntry, checkCode, moveEntry, renameEntry, restoreEntry, retireEntry } from '../../../src/lib/server/structure-edits.ts';
import { parseRegistration, registerChambers } from '../../../src/lib/server/chamber-registration.ts';
import { listChambers, listStructure } from '../../../src/lib/server/fleet-structure.ts';
import { ingestFile } from '../../../src/lib/server/ingest/index.ts';

let env: Awaited<ReturnType<typeof useTempDb>>;
beforeAll(async () => {
	env = await useTempDb();
});
afterAll(() => env.cleanup());

/** A three-wafer file of `chamber` (invented values; one OES line and one sensor). */
function file(chamber: string, wafer: string, hour = 6): string {
	const p = path.join(env.dir, `${chamber}-${wafer}.csv`);
	const rows = [0, 1, 2].map((i) => `${wafer}${i},L1,${chamber},ETCH-A,main,2026-11-02T0${hour}:0${i}:00Z,${100 + i},${5.5 + i / 10}`);
	fs.writeFileSync(p, ['wafer_id,lot_id,chamber_id,recipe,step,processed_at,oes_750.4,pressure_mtorr', ...rows].join('\n') + '\n');
	return p;
}

describe('codes and names', () => {
	it('accepts what ingest accepts as chamber_id and says what is wrong otherwise', () => {
		expect(checkCode('chamber', ' PX01-A ')).toEqual({ ok: true, code: 'PX01-A' });
		expect(checkCode('chamber', '')).toMatchObject({ ok: false, message: expect.stringContaining('is empty') });
		expect(checkCode('tool', 'a b')).toMatchObject({ ok: false, message: expect.stringContaining('characters other than') });
		expect(checkCode('area', 'X'.repeat(33))).toMatchObject({ ok: false, message: expect.stringContaining('longer than 32') });
		expect(checkCode('chamber', 42)).toMatchObject({ ok: false });
	});
});

describe('building a fab by hand', () => {
	it('creates an area, a tool in it and a chamber in that, with 400/404/409 naming the field', async () => {
		expect(await addEntry('area', { code: 'PLX', name: 'Plasma X' })).toEqual({ ok: true, code: 'PLX' });
		expect(await addEntry('area', { code: 'PLX' })).toMatchObject({ ok: false, status: 409, errors: { code: 'An area PLX exists already.' } });
		expect(await addEntry('tool', { code: 'PX01', parent: 'NOPE' })).toMatchObject({ ok: false, status: 404, errors: { area: 'There is no area NOPE.' } });
		expect(await addEntry('tool', { code: 'PX01', parent: 'PLX' })).toEqual({ ok: true, code: 'PX01' });
		expect(await addEntry('tool', { code: 'PX02', name: 'Etcher two', parent: 'PLX' })).toEqual({ ok: true, code: 'PX02' });
		const bad = await addEntry('chamber', { code: 'has space', parent: '', name: 'x'.repeat(121) });
		expect(bad).toMatchObject({ ok: false, status: 400 });
		expect(Object.keys((bad as { errors: object }).errors).sort()).toEqual(['code', 'name', 'tool']);
		expect(await addEntry('chamber', { code: 'PX01-A', parent: 'PX01' })).toEqual({ ok: true, code: 'PX01-A' });
		expect(await addEntry('chamber', { code: 'PX01-A', parent: 'PX02' })).toMatchObject({ ok: false, status: 409, errors: { code: 'Chamber PX01-A exists already, in tool PX01 (area PLX).' } });
		const chambers = await listChambers(env.k);
		expect(chambers.map((c) => [c.code, c.name, c.toolCode, c.areaCode])).toEqual([['PX01-A', 'PX01-A', 'PX01', 'PLX']]);
	});

	it('renames (names only) and moves a chamber between tools', async () => {
		expect(await renameEntry('chamber', 'PX01-A', '  Chamber A of PX01 ')).toEqual({ ok: true });
		expect(await renameEntry('chamber', 'PX01-A', '   ')).toMatchObject({ ok: false, status: 400, errors: { name: 'Give a name.' } });
		expect(await renameEntry('tool', 'NOPE', 'x')).toMatchObject({ ok: false, status: 404 });
		expect(await moveEntry('chamber', 'PX01-A', 'PX02')).toEqual({ ok: true, from: 'PX01', to: 'PX02' });
		expect(await moveEntry('chamber', 'PX01-A', 'PX02')).toMatchObject({ ok: false, status: 409, errors: { to: expect.stringContaining('already') } });
		expect(await moveEntry('chamber', 'PX01-A', 'GHOST')).toMatchObject({ ok: false, status: 404, errors: { to: 'There is no tool GHOST.' } });
		const [c] = await listChambers(env.k);
		expect([c.name, c.toolCode]).toEqual(['Chamber A of PX01', 'PX02']);
	});

	it('retires a tool only when its chambers are gone, and restores in order', async () => {
		expect(await retireEntry('tool', 'PX02')).toMatchObject({ ok: false, status: 409, errors: { code: expect.stringContaining('1 live chamber (PX01-A)') } });
		expect(await retireEntry('area', 'PLX')).toMatchObject({ ok: false, status: 409, errors: { code: expect.stringContaining('2 live tools') } });
		expect(await retireEntry('chamber', 'PX01-A')).toEqual({ ok: true });
		expect(await retireEntry('chamber', 'PX01-A')).toMatchObject({ ok: false, status: 409 });
		expect(await retireEntry('tool', 'PX02')).toEqual({ ok: true });
		expect(await moveEntry('chamber', 'PX01-A', 'PX01')).toMatchObject({ ok: false, errors: { code: expect.stringContaining('retired') } });
		expect(await addEntry('chamber', { code: 'PX02-B', parent: 'PX02' })).toMatchObject({ ok: false, status: 404, errors: { tool: expect.stringContaining('retired') } });
		expect(await restoreEntry('chamber', 'PX01-A')).toMatchObject({ ok: false, status: 409, errors: { code: expect.stringContaining('tool PX02 is retired') } });
		expect(await restoreEntry('tool', 'PX02')).toEqual({ ok: true });
		expect(await restoreEntry('chamber', 'PX01-A')).toEqual({ ok: true });
		expect((await listChambers(env.k)).map((c) => c.code)).toEqual(['PX01-A']);
	});
});

describe('a retired chamber keeps its history and refuses new wafers', () => {
	it('stores wafers, retires, refuses the next file’s rows with the reason, keeps the old rows', async () => {
		const first = await ingestFile(file('PX01-A', 'W'), { source: 'upload', submitterRole: 'engineer' });
		expect(first.rows.accepted).toBe(3);
		expect(await retireEntry('chamber', 'PX01-A')).toEqual({ ok: true });
		const later = await ingestFile(file('PX01-A', 'V', 7), { source: 'upload', submitterRole: 'admin', registerUnknownChambers: true });
		expect(later.rows).toMatchObject({ accepted: 0, rejected: 3 });
		expect(later.rejections[0]).toMatchObject({ line: 2, column: 'chamber_id', value: 'PX01-A', reason: expect.stringContaining('retired chamber') });
		expect(later.created.chambers).toEqual([]); // not registered a second time
		expect(await listChambers(env.k)).toEqual([]);
		const all = await listChambers(env.k, { includeRetired: true });
		expect(all.map((c) => [c.code, c.retiredAt !== null])).toEqual([['PX01-A', true]]);
		const s = await listStructure(env.k);
		expect(s.chambers.find((c) => c.code === 'PX01-A')).toMatchObject({ waferSteps: 3, lastWaferAt: Date.parse('2026-11-02T06:02:00Z') });
		expect(await restoreEntry('chamber', 'PX01-A')).toEqual({ ok: true });
	});
});

describe('registered by ingest, then assigned', () => {
	it('registers an unknown chamber into UNASSIGNED and lets an admin move it to its tool', async () => {
		const r = await ingestFile(file('PX09-C', 'U'), { source: 'api', registerUnknownChambers: true });
		expect(r.created.chambers).toEqual(['PX09-C']);
		expect((await listChambers(env.k)).find((c) => c.code === 'PX09-C')).toMatchObject({ toolCode: 'UNASSIGNED', areaCode: 'UNASSIGNED' });
		expect(await retireEntry('tool', 'UNASSIGNED')).toMatchObject({ ok: false, status: 409, errors: { code: expect.stringContaining('cannot be retired') } });
		expect(await moveEntry('chamber', 'PX09-C', 'PX01')).toEqual({ ok: true, from: 'UNASSIGNED', to: 'PX01' });
		expect((await listChambers(env.k)).find((c) => c.code === 'PX09-C')).toMatchObject({ toolCode: 'PX01', areaCode: 'PLX' });
	});
});

describe('bulk registration (POST /api/chambers)', () => {
	it('checks every entry and names it by its JSON path', () => {
		expect(parseRegistration([])).toMatchObject({ ok: false, errors: { body: expect.any(String) } });
		expect(parseRegistration({ chambers: [] })).toMatchObject({ ok: false, errors: { chambers: 'Give a non-empty list of chambers.' } });
		const r = parseRegistration({ chambers: [{ code: 'A1', tool: 'T1', area: 'Z' }, { code: 'A1', tool: 'T1', area: 'Z' }, { code: 'bad code', area: 'Z' }, 7] });
		expect(r).toMatchObject({
			ok: false,
			errors: {
				'chambers[1].code': 'Chamber A1 is listed twice (also at chambers[0]).',
				'chambers[2].code': expect.stringContaining('characters other than'),
				'chambers[2].tool': 'Give the code of the tool the chamber belongs to.',
				'chambers[3]': 'Give an object with code, tool and area.'
			}
		});
		expect(parseRegistration({ chambers: [{ code: 'B1', tool: 'T9', area: 'Z1' }, { code: 'B2', tool: 'T9', area: 'Z2' }] })).toMatchObject({
			ok: false,
			errors: { chambers: 'Tool T9 is given in two areas (Z1 and Z2).' }
		});
		expect(parseRegistration({ code: 'C1', tool: 'T1', area: 'Z' })).toEqual({ ok: true, items: [{ code: 'C1', name: 'C1', tool: 'T1', area: 'Z' }] });
	});

	it('lays out a 200-chamber fab in one call, creating areas and tools on the way', async () => {
		const items = Array.from({ length: 200 }, (_, i) => ({ code: `F${String(Math.floor(i / 4)).padStart(2, '0')}-${'ABCD'[i % 4]}`, tool: `F${String(Math.floor(i / 4)).padStart(2, '0')}`, area: i < 100 ? 'FA' : 'FB' }));
		const parsed = parseRegistration({ chambers: items });
		if (!parsed.ok) throw new Error(JSON.stringify(parsed.errors));
		const r = await registerChambers(parsed.items);
		expect(r).toMatchObject({ ok: true, areasCreated: ['FA', 'FB'] });
		expect(r.ok && r.toolsCreated.length).toBe(50);
		const fleet = await listChambers(env.k);
		expect(fleet.filter((c) => c.areaCode === 'FB')).toHaveLength(100);
	});

	it('stores nothing when one entry clashes (409 names it)', async () => {
		const before = (await listChambers(env.k)).length;
		const r = await registerChambers([
			{ code: 'G1-A', name: 'G1-A', tool: 'G1', area: 'GA' },
			{ code: 'F00-A', name: 'F00-A', tool: 'F00', area: 'FA' }
		]);
		expect(r).toMatchObject({ ok: false, status: 409, errors: { 'chambers[1].code': 'Chamber F00-A exists already, in tool F00 (area FA).' } });
		const wrongArea = await registerChambers([{ code: 'F00-Z', name: 'F00-Z', tool: 'F00', area: 'FB' }]);
		expect(wrongArea).toMatchObject({ ok: false, status: 409, errors: { tool: 'Tool F00 is in area FA, not FB.' } });
		expect((await listChambers(env.k)).length).toBe(before);
		expect(await env.k('areas').where({ code: 'GA' }).first()).toBeUndefined();
	});
});
