/** The parts of OpenAPI 3.1 that Lockstep's document uses (https://spec.openapis.org/oas/v3.1.0). */
export type Schema = Record<string, unknown>;
export type Method = 'get' | 'post' | 'put' | 'patch' | 'delete';

export interface Operation {
	summary: string;
	description?: string;
	operationId: string;
	tags: string[];
	parameters?: Record<string, unknown>[];
	requestBody?: Record<string, unknown>;
	responses: Record<string, unknown>;
	security?: Record<string, string[]>[];
	/** Lockstep: who may call it (role for a session or a personal token; scope for any token) */
	'x-lockstep-access': string;
}

export type PathItem = Partial<Record<Method, Operation>>;

/** `$ref` to a component schema. */
export const ref = (name: string): Schema => ({ $ref: `#/components/schemas/${name}` });

/** A JSON answer with a schema. */
export function answer(description: string, schema: Schema) {
	return { description, content: { 'application/json': { schema } } };
}

/** The `{ error, … }` answer every route gives for bad input, a missing entry or a refusal. */
export const problem = (description: string) => answer(description, ref('Problem'));

export function query(name: string, description: string, schema: Schema = { type: 'string' }, required = false) {
	return { name, in: 'query', required, description, schema };
}

export function pathParam(name: string, description: string, schema: Schema = { type: 'string' }) {
	return { name, in: 'path', required: true, description, schema };
}

export const jsonBody = (schema: Schema, description?: string) => ({ required: true, description, content: { 'application/json': { schema } } });

/** Answers every protected route may give besides its own. */
export const AUTH_ANSWERS = {
	'401': problem('No session and no token, or the token is unknown or revoked.'),
	'403': problem('The role or the token’s scope does not allow this; the message says what is needed.')
};
