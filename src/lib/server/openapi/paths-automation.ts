/**
 * Qualification campaigns, fleet matching and alarms: the contract fab automation relies on (issue 12
 * item 5). These names and request shapes are fixed by the issue; check the answers against the routes
 * when they change.
 */
import { AUTH_ANSWERS, answer, jsonBody, pathParam, problem, query, ref, type PathItem } from './types.ts';

const str = { type: 'string' };

export const CAMPAIGN_PATHS: Record<string, PathItem> = {
	'/api/qualifications': {
		get: {
			operationId: 'qualifications',
			tags: ['Qualification'],
			summary: 'The latest 100 qualification campaigns with their state and progress',
			'x-lockstep-access': 'any signed-in role; a token with read',
			responses: {
				'200': answer('The campaigns, newest first.', {
					type: 'object',
					required: ['campaigns'],
					properties: { campaigns: { type: 'array', items: { type: 'object', additionalProperties: true } } }
				}),
				...AUTH_ANSWERS
			}
		},
		post: {
			operationId: 'startQualification',
			tags: ['Qualification'],
			summary: 'Draft baselines for a recipe step on many chambers in the background',
			description: 'Every chamber (default: all that ran the step) gets a draft baseline from its golden wafers, screened (Phase I) with what was left out and why. Poll the answer’s id.',
			requestBody: jsonBody({
				type: 'object',
				required: ['recipe', 'step', 'golden'],
				properties: {
					recipe: str,
					step: str,
					chambers: { type: 'array', items: str, description: 'default: every chamber that ran the step' },
					golden: ref('GoldenRule'),
					components: { oneOf: [{ type: 'integer', minimum: 1 }, { const: 'auto' }], description: 'principal components; default auto' }
				}
			}),
			'x-lockstep-access': 'engineer (session, or a personal token with write)',
			responses: {
				'202': answer('Started.', { type: 'object', required: ['id'], properties: { id: { oneOf: [str, { type: 'integer' }] } } }),
				'400': problem('A bad body; `errors` names the fields.'),
				'404': problem('No such recipe step or chamber.'),
				...AUTH_ANSWERS
			}
		}
	},
	'/api/qualifications/{id}': {
		get: {
			operationId: 'qualification',
			tags: ['Qualification'],
			summary: 'A qualification’s state, progress and drafts',
			parameters: [pathParam('id', 'qualification id')],
			'x-lockstep-access': 'any signed-in role; a personal token with read',
			responses: {
				'200': answer('The qualification.', {
					type: 'object',
					required: ['state', 'progress', 'drafts'],
					properties: { state: str, progress: { type: 'object', additionalProperties: true }, drafts: { type: 'array', items: ref('QualificationDraft') } }
				}),
				'404': problem('No such qualification.'),
				...AUTH_ANSWERS
			}
		}
	},
	'/api/qualifications/{id}/approve': {
		post: {
			operationId: 'approveQualification',
			tags: ['Qualification'],
			summary: 'Approve drafts (default: every draft without warnings) and rescore in the background',
			parameters: [pathParam('id', 'qualification id')],
			requestBody: jsonBody({ type: 'object', properties: { baselineIds: { type: 'array', items: { type: 'integer' } } } }),
			'x-lockstep-access': 'engineer (session, or a personal token with write); under four-eyes, not the builder',
			responses: {
				'200': answer('The approvals and the rescore task.', {
					type: 'object',
					properties: { approvals: { type: 'array', items: { type: 'object', additionalProperties: true } }, rescoreTaskId: { oneOf: [str, { type: 'null' }] } },
					additionalProperties: true
				}),
				'400': problem('A bad body.'),
				'404': problem('No such qualification or baseline.'),
				'409': problem('Four-eyes, or a draft that is no longer a draft.'),
				...AUTH_ANSWERS
			}
		}
	},
	'/api/matching': {
		get: {
			operationId: 'latestMatching',
			tags: ['Fleet matching'],
			summary: 'The latest fleet-matching run of a recipe step, or why there is none',
			parameters: [query('recipe', 'recipe code'), query('step', 'step name')],
			'x-lockstep-access': 'any signed-in role; a personal token with read; a service token with read',
			responses: {
				'200': answer('The latest run, or `{ranAt: null, reason}`.', {
					type: 'object',
					properties: {
						ranAt: { oneOf: [{ type: 'string', format: 'date-time' }, { type: 'null' }] },
						reason: str,
						chambers: {
							type: 'array',
							items: { type: 'object', properties: { chamber: str, distance: { type: 'number' }, z: { type: 'number' }, flagged: { type: 'boolean' }, separating: { type: 'array', items: {} } } }
						}
					},
					additionalProperties: true
				}),
				'400': problem('A bad parameter.'),
				...AUTH_ANSWERS
			}
		},
		post: {
			operationId: 'runMatching',
			tags: ['Fleet matching'],
			summary: 'Run fleet matching now (all steps, one recipe, or one step)',
			requestBody: jsonBody({ type: 'object', properties: { recipe: str, step: str } }),
			'x-lockstep-access': 'engineer (session, or a personal token with write)',
			responses: { '200': answer('The runs made, or why each was skipped.', { type: 'object', additionalProperties: true }), '202': answer('Started in the background.', { type: 'object', additionalProperties: true }), '400': problem('A bad body.'), ...AUTH_ANSWERS }
		}
	},
	'/api/alarms': {
		get: {
			operationId: 'listAlarms',
			tags: ['Alarms'],
			summary: 'Alarms with rule, severity, state, first and latest wafer, worst ratio and leading contributors',
			parameters: [query('state', 'alarm state'), query('chamber', 'chamber code'), query('since', 'ISO 8601 instant: alarms active since')],
			'x-lockstep-access': 'any signed-in role; a personal token with read; a service token with read',
			responses: { '200': answer('The alarms.', { type: 'object', properties: { alarms: { type: 'array', items: ref('Alarm') } }, additionalProperties: true }), '400': problem('A bad parameter.'), ...AUTH_ANSWERS }
		}
	},
	'/api/alarms/acknowledge': {
		post: {
			operationId: 'acknowledgeAlarms',
			tags: ['Alarms'],
			summary: 'Acknowledge alarms with a cause code, a disposition and a comment, as the caller',
			requestBody: jsonBody({
				type: 'object',
				required: ['alarmIds', 'cause', 'disposition'],
				properties: { alarmIds: { type: 'array', items: { type: 'integer' }, minItems: 1 }, cause: str, disposition: str, comment: str }
			}),
			'x-lockstep-access': 'engineer (session, or a personal token with write)',
			responses: {
				'200': answer('What was acknowledged.', { type: 'object', additionalProperties: true }),
				'400': problem('A bad body; `errors` names the fields.'),
				'404': problem('No such alarm.'),
				'409': problem('An alarm that is closed already.'),
				...AUTH_ANSWERS
			}
		}
	}
};
