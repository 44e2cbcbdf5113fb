/**
 * Lockstep's API as an OpenAPI 3.1 document, served at `GET /api/openapi.json`. Every route under
 * src/routes/api has its path here (tests/unit/openapi-routes.test.ts walks the tree and fails on a
 * route or method the document lacks, or the reverse). Paths use OpenAPI's `{param}` for SvelteKit's
 * `[param]`.
 */
import { FAB_PATHS } from './paths-fab.ts';
import { CAMPAIGN_PATHS } from './paths-automation.ts';
import { VIEW_PATHS } from './paths-views.ts';
import { SCHEMAS } from './schemas.ts';
import type { PathItem } from './types.ts';

export const PATHS: Record<string, PathItem> = { ...VIEW_PATHS, ...FAB_PATHS, ...CAMPAIGN_PATHS };

export function openApiDocument(serverUrl: string) {
	return {
		openapi: '3.1.0',
		info: {
			title: 'Lockstep API',
			version: '1',
			description:
				'Per-wafer summaries in, baselines, scores, fleet matching and alarms out. Authenticate with `Authorization: Bearer <token>`: a personal token (made on /account/tokens, or `npm run token:create -- --user NAME --scope …`) acts as its owner with their role, within its scopes (read, write, ingest, register); a service token (admins, /admin/tokens) serves tool hosts (read, ingest, register). A signed-in browser session works too. Errors answer `{error, …}` naming the field, parameter or file location at fault. Lockstep recommends and records; it never acts on a tool.'
		},
		servers: [{ url: serverUrl }],
		security: [{ bearer: [] }, { session: [] }],
		paths: Object.fromEntries(Object.entries(PATHS).sort(([a], [b]) => a.localeCompare(b))),
		components: {
			schemas: SCHEMAS,
			securitySchemes: {
				bearer: { type: 'http', scheme: 'bearer', description: 'lst_… API token' },
				session: { type: 'apiKey', in: 'cookie', name: 'lockstep_session' }
			}
		}
	};
}
