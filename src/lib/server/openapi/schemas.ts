/** Component schemas shared by the operations of Lockstep's API document. */
import type { Schema } from './types.ts';

const str = { type: 'string' } as const;
const int = { type: 'integer' } as const;
const num = { type: 'number' } as const;
const instant = { type: 'string', format: 'date-time' } as const;
const nullable = (s: Schema): Schema => ({ oneOf: [s, { type: 'null' }] });

export const SCHEMAS: Record<string, Schema> = {
	Problem: {
		type: 'object',
		required: ['error'],
		description: 'What is wrong, and where: `errors` maps a field (a JSON path such as `chambers[3].code`) to its message; `param` names a bad query parameter; `location` points into a file or body.',
		properties: {
			error: str,
			errors: { type: 'object', additionalProperties: str },
			param: str,
			location: nullable({ type: 'object', properties: { file: nullable(str), line: nullable(int), column: nullable({ oneOf: [int, str] }) } })
		}
	},
	Chamber: {
		type: 'object',
		required: ['code', 'name', 'tool', 'area'],
		properties: {
			code: { ...str, description: 'what tool hosts send as chamber_id; never changes' },
			name: str,
			tool: str,
			area: str,
			retiredAt: nullable(instant),
			requalifySince: nullable(instant),
			requalifyReason: nullable(str)
		}
	},
	ChamberPlacement: {
		type: 'object',
		required: ['code', 'tool', 'area'],
		properties: {
			code: { ...str, maxLength: 32, pattern: '^[A-Za-z0-9][A-Za-z0-9._:#/+-]*$' },
			tool: { ...str, maxLength: 32, pattern: '^[A-Za-z0-9][A-Za-z0-9._:#/+-]*$' },
			area: { ...str, maxLength: 32, pattern: '^[A-Za-z0-9][A-Za-z0-9._:#/+-]*$' },
			name: { ...str, maxLength: 120, description: 'defaults to the code' }
		}
	},
	IngestReport: {
		type: 'object',
		description: 'What happened to a file: rows stored, refused (each with line, column, value and reason), already stored; chambers registered.',
		required: ['status', 'summary', 'rows', 'created', 'rejections'],
		properties: {
			fileId: nullable(int),
			fileName: str,
			status: { enum: ['done', 'rejected', 'failed', 'duplicate'] },
			summary: str,
			rows: { type: 'object', properties: { total: int, accepted: int, rejected: int, duplicate: int } },
			waferSteps: { type: 'object', properties: { scored: int, noBaseline: int } },
			alarmsOpened: { type: 'array', items: int },
			created: {
				type: 'object',
				description: 'recipes, recipe steps and chambers first seen in this file; `chambers` lists those registered into the UNASSIGNED tool (a token with the register scope)',
				properties: { recipes: { type: 'array', items: str }, recipeSteps: { type: 'array', items: str }, chambers: { type: 'array', items: str } }
			},
			rejections: {
				type: 'array',
				items: { type: 'object', properties: { line: int, column: nullable(str), value: nullable(str), reason: str } }
			},
			rejectionsTotal: int
		}
	},
	GoldenRule: {
		description: 'How the golden wafers are chosen: a time range, lots, wafer ids, or the first N in-control wafers after the latest wet clean (past seasoning).',
		oneOf: [
			{ type: 'object', required: ['from', 'to'], properties: { from: instant, to: instant }, additionalProperties: false },
			{ type: 'object', required: ['lots'], properties: { lots: { type: 'array', items: str, minItems: 1 } }, additionalProperties: false },
			{ type: 'object', required: ['waferIds'], properties: { waferIds: { type: 'array', items: str, minItems: 1 } }, additionalProperties: false },
			{
				type: 'object',
				required: ['afterWetClean'],
				properties: { afterWetClean: { type: 'object', required: ['count'], properties: { count: { ...int, minimum: 1 } } } },
				additionalProperties: false
			}
		]
	},
	QualificationDraft: {
		type: 'object',
		required: ['chamber', 'recipe', 'step', 'baselineId', 'n', 'k', 'screenedOut', 'warnings', 'limits'],
		properties: {
			chamber: str,
			recipe: str,
			step: str,
			baselineId: nullable(int),
			n: { ...int, description: 'golden wafers kept' },
			k: { ...int, description: 'principal components' },
			screenedOut: { type: 'array', items: { type: 'object', required: ['waferId', 'reason'], properties: { waferId: str, reason: str } } },
			warnings: { type: 'array', items: str },
			limits: { type: 'object', description: 'the control limits of the draft (T², Q and their warning levels)', additionalProperties: true }
		}
	},
	Alarm: {
		type: 'object',
		properties: {
			id: int,
			chamber: str,
			recipe: str,
			step: str,
			rule: str,
			severity: str,
			state: str,
			firstWafer: { type: 'object', additionalProperties: true },
			latestWafer: { type: 'object', additionalProperties: true },
			worstRatio: num,
			contributors: { type: 'array', items: { type: 'object', additionalProperties: true } }
		}
	},
	Task: {
		type: 'object',
		description: 'A background task of this server process (a rescore, a qualification).',
		required: ['id', 'kind', 'state', 'done'],
		properties: {
			id: str,
			kind: str,
			label: str,
			createdBy: nullable(str),
			startedAt: { ...int, description: 'epoch ms' },
			finishedAt: nullable(int),
			state: { enum: ['running', 'done', 'failed'] },
			done: int,
			total: nullable(int),
			message: nullable(str),
			result: nullable({ type: 'object', additionalProperties: true })
		}
	}
};
