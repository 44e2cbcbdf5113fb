/**
 * The OpenAPI document against the tree: every `src/routes/api/**\/+server.ts` and each HTTP method it
 * exports must have an operation in the document, and every operation must have its route — except the
 * routes listed in PENDING_ROUTES.
 */
import fs from 'node:fs';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { openApiDocument } from '../../../src/lib/server/openapi/document.ts';

/**
 * Operations the document describes whose routes are built on other branches (issue 12: qualification
 * campaigns, fleet matching, alarms). LEAD: when those branches merge, delete each entry here whose
 * route now exists — this test fails until you do, so the list cannot go stale.
 */
const PENDING_ROUTES: string[] = [];

const METHODS = ['GET', 'POST', 'PUT', 'PATCH', 'DELETE'] as const;
const API_DIR = 'src/routes/api';

/** The HTTP methods a +server.ts exports (`export const GET`, `export async function POST`, `export { x as GET }`). */
export function exportedMethods(source: string): string[] {
	const found = new Set<string>();
	for (const m of source.matchAll(/export\s+(?:const|let|async\s+function|function)\s+([A-Z]+)\b/g)) found.add(m[1]);
	for (const m of source.matchAll(/export\s*\{([^}]*)\}/g))
		for (const part of m[1].split(',')) found.add(part.trim().split(/\s+as\s+/).pop()!.trim());
	return METHODS.filter((x) => found.has(x));
}

/** `METHOD /api/path/{param}` for every endpoint in the tree (SvelteKit's `[param]` → OpenAPI's `{param}`). */
function treeOperations(dir = API_DIR): string[] {
	const out: string[] = [];
	for (const e of fs.readdirSync(dir, { withFileTypes: true })) {
		const full = path.join(dir, e.name);
		if (e.isDirectory()) out.push(...treeOperations(full));
		else if (e.name === '+server.ts' || e.name === '+server.js') {
			const route = '/' + path.relative('src/routes', dir).split(path.sep).join('/').replace(/\[(\w+)\]/g, '{$1}');
			for (const m of exportedMethods(fs.readFileSync(full, 'utf8'))) out.push(`${m} ${route}`);
		}
	}
	return out;
}

const doc = openApiDocument('http://127.0.0.1:3000');
const docOperations = Object.entries(doc.paths).flatMap(([p, item]) => Object.keys(item).map((m) => `${m.toUpperCase()} ${p}`));

describe('OpenAPI document vs the routes in src/routes/api', () => {
	it('reads exported methods in the forms SvelteKit accepts', () => {
		expect(exportedMethods('export const GET: RequestHandler = async () => x;\nexport async function POST() {}')).toEqual(['GET', 'POST']);
		expect(exportedMethods('const a = 1; export { a as DELETE, b as PATCH };')).toEqual(['PATCH', 'DELETE']);
		expect(exportedMethods('export const prerender = false; // GET is not here')).toEqual([]);
	});

	it('finds the routes of this tree (the walk itself works)', () => {
		const tree = treeOperations();
		expect(tree).toContain('POST /api/ingest');
		expect(tree).toContain('GET /api/chambers/{code}/series');
		expect(tree.length).toBeGreaterThanOrEqual(12);
	});

	it('documents every route and method that exists', () => {
		const missing = treeOperations().filter((op) => !docOperations.includes(op));
		expect(missing, 'routes the OpenAPI document lacks').toEqual([]);
	});

	it('documents nothing that does not exist, apart from the pending routes', () => {
		const tree = new Set(treeOperations());
		const extra = docOperations.filter((op) => !tree.has(op) && !PENDING_ROUTES.includes(op));
		expect(extra, 'operations in the document without a route').toEqual([]);
	});

	it('lists as pending only routes that still do not exist, and only documented ones', () => {
		const tree = new Set(treeOperations());
		expect(PENDING_ROUTES.filter((op) => tree.has(op)), 'routes that exist now: remove them from PENDING_ROUTES').toEqual([]);
		expect(PENDING_ROUTES.filter((op) => !docOperations.includes(op)), 'pending routes the document lacks').toEqual([]);
	});
});

describe('OpenAPI document is well formed', () => {
	it('is 3.1 with unique operation ids, responses and declared path parameters', () => {
		expect(doc.openapi).toBe('3.1.0');
		const ids = new Set<string>();
		for (const [p, item] of Object.entries(doc.paths)) {
			const inPath = [...p.matchAll(/\{(\w+)\}/g)].map((m) => m[1]).sort();
			for (const [method, op] of Object.entries(item)) {
				const where = `${method.toUpperCase()} ${p}`;
				expect(ids.has(op!.operationId), `${where}: operationId ${op!.operationId} repeated`).toBe(false);
				ids.add(op!.operationId);
				expect(Object.keys(op!.responses).length, where).toBeGreaterThan(0);
				expect(op!['x-lockstep-access'], where).toBeTruthy();
				const declared = (op!.parameters ?? []).filter((x) => x.in === 'path').map((x) => String(x.name)).sort();
				expect(declared, `${where}: path parameters`).toEqual(inPath);
			}
		}
	});

	it('resolves every $ref to a component schema', () => {
		const refs = [...JSON.stringify(doc).matchAll(/"\$ref":"#\/components\/schemas\/(\w+)"/g)].map((m) => m[1]);
		expect(refs.length).toBeGreaterThan(10);
		for (const r of refs) expect(doc.components.schemas, r).toHaveProperty(r);
	});

	it('names the contract fab automation relies on exactly', () => {
		for (const op of ['POST /api/ingest', 'GET /api/chambers', 'POST /api/chambers', 'POST /api/qualifications', 'GET /api/qualifications/{id}', 'POST /api/qualifications/{id}/approve', 'POST /api/matching', 'GET /api/matching', 'GET /api/alarms', 'POST /api/alarms/acknowledge'])
			expect(docOperations).toContain(op);
		const q = doc.paths['/api/qualifications'].post!;
		const body = (q.requestBody as { content: Record<string, { schema: { required: string[] } }> }).content['application/json'].schema;
		expect(body.required).toEqual(['recipe', 'step', 'golden']);
		expect(Object.keys(q.responses)).toContain('202');
	});
});
