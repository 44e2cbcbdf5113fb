/** Fab structure, ingest and the document itself. */
import { AUTH_ANSWERS, answer, jsonBody, problem, query, ref, type PathItem } from './types.ts';

export const FAB_PATHS: Record<string, PathItem> = {
	'/api/chambers': {
		get: {
			operationId: 'listChambers',
			tags: ['Fab structure'],
			summary: 'The fleet’s chambers with their tool and area',
			parameters: [query('retired', 'include adds retired chambers (default exclude)', { enum: ['include', 'exclude'] })],
			'x-lockstep-access': 'any signed-in role; a personal token with read; a service token with read or ingest',
			responses: { '200': answer('The chambers, by area, tool and code.', { type: 'object', required: ['chambers'], properties: { chambers: { type: 'array', items: ref('Chamber') } } }), '400': problem('A bad `retired` value.'), ...AUTH_ANSWERS }
		},
		post: {
			operationId: 'registerChambers',
			tags: ['Fab structure'],
			summary: 'Register one chamber, or many in one request',
			description:
				'A missing area or tool is created on the way (named by its code; rename it on /admin/structure). Everything in the request is stored, or nothing is. 409 names the entry that clashes: a chamber that exists already (and where), a tool given in another area than the one it is in, a retired area or tool.',
			requestBody: jsonBody({ oneOf: [ref('ChamberPlacement'), { type: 'object', required: ['chambers'], properties: { chambers: { type: 'array', minItems: 1, maxItems: 2000, items: ref('ChamberPlacement') } } }] }),
			'x-lockstep-access': 'admin (session, or a personal token with write)',
			responses: {
				'201': answer('Registered.', {
					type: 'object',
					required: ['chambers', 'areasCreated', 'toolsCreated'],
					properties: { chambers: { type: 'array', items: ref('ChamberPlacement') }, areasCreated: { type: 'array', items: { type: 'string' } }, toolsCreated: { type: 'array', items: { type: 'string' } } }
				}),
				'400': problem('A malformed body or field; `errors` names each field at fault.'),
				'409': problem('A clash with what exists; nothing was stored.'),
				'415': problem('Not application/json.'),
				...AUTH_ANSWERS
			}
		}
	},
	'/api/ingest': {
		post: {
			operationId: 'ingestFile',
			tags: ['Ingest'],
			summary: 'Send one file of per-wafer summaries (CSV or JSON)',
			description:
				'The body is the file, streamed. A file is stored whole or not at all; the same file or wafer × step twice is a no-op. With a token carrying the register scope, chambers the fab lacks are registered into the UNASSIGNED tool and listed in `created.chambers`; without it their rows are refused with the reason.',
			parameters: [query('name', 'the file’s name, shown in reports (or the X-File-Name header)')],
			requestBody: {
				required: true,
				content: { 'text/csv': { schema: { type: 'string' } }, 'application/json': { schema: { type: 'object', properties: { rows: { type: 'array', items: { type: 'object' } } } } } }
			},
			'x-lockstep-access': 'engineer (session, or a personal token with ingest); a service token with ingest',
			responses: {
				'200': answer('Stored (some rows may be refused: see rejections).', ref('IngestReport')),
				'400': answer('The file was refused: the error is located (line, column).', { allOf: [ref('Problem'), { type: 'object', properties: { report: ref('IngestReport') } }] }),
				'413': problem('Larger than the upload limit.'),
				'415': problem('Neither text/csv nor application/json.'),
				'422': answer('Read to the end but not one row stored.', { allOf: [ref('Problem'), { type: 'object', properties: { report: ref('IngestReport') } }] }),
				...AUTH_ANSWERS
			}
		}
	},
	'/api/uploads': {
		get: {
			operationId: 'listUploads',
			tags: ['Ingest'],
			summary: 'Recent files, or the progress of one’s own upload',
			parameters: [query('id', 'an upload id (X-Upload-Id of the POST): its progress', { type: 'string', pattern: '^[A-Za-z0-9-]{8,64}$' })],
			'x-lockstep-access': 'engineer (session, or a personal token with read)',
			responses: {
				'200': answer('`{files}` without id; `{progress}` with it.', { type: 'object', properties: { files: { type: 'array', items: { type: 'object', additionalProperties: true } }, progress: { oneOf: [{ type: 'object', additionalProperties: true }, { type: 'null' }] } } }),
				'400': problem('A malformed id.'),
				...AUTH_ANSWERS
			}
		}
	},
	'/api/openapi.json': {
		get: {
			operationId: 'openApiDocument',
			tags: ['Service'],
			summary: 'This document',
			security: [],
			'x-lockstep-access': 'public',
			responses: { '200': answer('OpenAPI 3.1.', { type: 'object' }) }
		}
	}
};
