/** The read API behind the screens, and the service routes. */
import { AUTH_ANSWERS, answer, pathParam, problem, query, ref, type PathItem } from './types.ts';

const READ = 'any signed-in role; a personal token with read; a service token with read';
const view = (description: string) => answer(description, { type: 'object', additionalProperties: true });
const instantParam = (name: string, what: string) => query(name, `${what}: ISO 8601 with a zone, or epoch ms`);

export const VIEW_PATHS: Record<string, PathItem> = {
	'/api/health': {
		get: {
			operationId: 'health',
			tags: ['Service'],
			summary: 'Liveness and database reachability',
			security: [],
			'x-lockstep-access': 'public',
			responses: { '200': answer('Up.', { type: 'object', properties: { ok: { const: true } } }), '503': problem('The database is unreachable.') }
		}
	},
	'/api/me': {
		get: {
			operationId: 'me',
			tags: ['Service'],
			summary: 'Who the caller is (for a personal token: its owner)',
			'x-lockstep-access': 'any signed-in role; a personal token with read',
			responses: { '200': view('`{user}`: id, username, displayName, role, timeZone, email.'), ...AUTH_ANSWERS }
		}
	},
	'/api/fleet': {
		get: {
			operationId: 'fleet',
			tags: ['Views'],
			summary: 'Fab summary (counts, data span) and the chambers in service',
			'x-lockstep-access': READ,
			responses: { '200': view('`{summary, chambers}`.'), ...AUTH_ANSWERS }
		}
	},
	'/api/heatmap': {
		get: {
			operationId: 'heatmap',
			tags: ['Views'],
			summary: 'The fleet heatmap: worst T²/Q ratio per chamber and time bucket, alarm ages, drifting chambers',
			parameters: [
				query('window', 'time window', { enum: ['24h', '7d', '30d'] }),
				query('anchor', 'where the window ends when `end` is not given', { enum: ['auto', 'now', 'latest'] }),
				instantParam('end', 'the window’s end'),
				query('area', 'an area code'),
				query('recipe', 'a recipe code'),
				query('step', 'a step name')
			],
			'x-lockstep-access': READ,
			responses: { '200': view('The heatmap view (window, buckets, groups of area → tool → chamber rows, alarm ages, drifting chambers).'), '400': problem('A bad parameter (`param` names it).'), ...AUTH_ANSWERS }
		}
	},
	'/api/chambers/{code}/series': {
		get: {
			operationId: 'chamberSeries',
			tags: ['Views'],
			summary: 'One chamber × step over time: T² and Q ratios, EWMA, forecast, maintenance marks',
			parameters: [pathParam('code', 'chamber code'), query('step', 'RECIPE/step (default: the busiest)'), instantParam('from', 'start'), instantParam('to', 'end')],
			'x-lockstep-access': READ,
			responses: { '200': view('`{chamber, step, …series}`.'), '400': problem('A bad range.'), '404': problem('No such chamber, or it has not run the step.'), ...AUTH_ANSWERS }
		}
	},
	'/api/chambers/{code}/wafers': {
		get: {
			operationId: 'chamberWafers',
			tags: ['Views'],
			summary: 'A chamber’s wafer-steps with their scores: filtered, sorted, paged (JSON) or all as CSV',
			parameters: [
				pathParam('code', 'chamber code'),
				query('step', 'RECIPE/step or a step id'),
				instantParam('from', 'start'),
				instantParam('to', 'end'),
				query('state', 'filter', { enum: ['all', 'beyond', 'warning', 'in_control', 'unscored', 'golden'] }),
				query('q', 'wafer or lot id contains'),
				query('sort', 'column', { enum: ['processed_at', 'wafer_id', 'lot_id', 'slot', 't2_ratio', 'q_ratio', 'phi_ratio', 'worst_ratio'] }),
				query('dir', 'order', { enum: ['asc', 'desc'] }),
				query('page', 'page number', { type: 'integer', minimum: 1 }),
				query('size', 'rows a page', { type: 'integer', minimum: 5, maximum: 500 }),
				query('format', 'csv: every filtered row as a download', { enum: ['json', 'csv'] })
			],
			'x-lockstep-access': READ,
			responses: {
				'200': { description: 'One page (JSON) or the CSV file.', content: { 'application/json': { schema: { type: 'object', additionalProperties: true } }, 'text/csv': { schema: { type: 'string' } } } },
				'400': problem('A bad parameter (`param` names it).'),
				'404': problem('No such chamber or step.'),
				...AUTH_ANSWERS
			}
		}
	},
	'/api/wafers/{id}': {
		get: {
			operationId: 'waferStep',
			tags: ['Views'],
			summary: 'One wafer-step: statistics, limits, contributions (reconstruction-based or complete)',
			parameters: [pathParam('id', 'wafer-step number', { type: 'string', pattern: '^\\d{1,12}$' }), query('contrib', 'contribution method', { enum: ['rbc', 'complete'] })],
			'x-lockstep-access': READ,
			responses: { '200': view('The wafer-step view.'), '400': problem('A bad id or contrib.'), '404': problem('No such wafer-step.'), ...AUTH_ANSWERS }
		}
	},
	'/api/tasks/{id}': {
		get: {
			operationId: 'task',
			tags: ['Service'],
			summary: 'Progress of a background task (rescore, qualification)',
			parameters: [pathParam('id', 'task id')],
			'x-lockstep-access': 'any signed-in role; a personal token with read',
			responses: { '200': answer('The task.', ref('Task')), '404': problem('No such task in this server process.'), ...AUTH_ANSWERS }
		}
	}
};
