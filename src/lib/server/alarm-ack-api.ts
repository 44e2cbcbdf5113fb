/** Validation of `POST /api/alarms/acknowledge` bodies: each refusal names its field. */
import { DISPOSITIONS } from './alarms.ts';

export type AckBody = { alarmIds: number[]; causeCode: string; disposition: string; comment: string };

export function parseAcknowledgeBody(body: unknown): { ok: true; value: AckBody } | { ok: false; error: string; field: string | null } {
	if (typeof body !== 'object' || body === null || Array.isArray(body)) return { ok: false, error: 'The body must be a JSON object.', field: null };
	const b = body as Record<string, unknown>;
	const ids = b.alarmIds;
	if (!Array.isArray(ids) || ids.length === 0) return { ok: false, error: 'alarmIds must be a non-empty array of alarm ids.', field: 'alarmIds' };
	if (ids.length > 500) return { ok: false, error: 'Acknowledge at most 500 alarms at a time.', field: 'alarmIds' };
	const bad = ids.findIndex((x) => !(typeof x === 'number' && Number.isInteger(x) && x > 0));
	if (bad >= 0) return { ok: false, error: `alarmIds[${bad}] is not a positive whole number.`, field: `alarmIds[${bad}]` };
	if (typeof b.cause !== 'string' || !b.cause.trim()) return { ok: false, error: 'cause must be a cause code, e.g. "FA-LIMIT".', field: 'cause' };
	if (typeof b.disposition !== 'string' || !(b.disposition in DISPOSITIONS))
		return { ok: false, error: `disposition must be one of ${Object.keys(DISPOSITIONS).join(', ')}.`, field: 'disposition' };
	if (b.comment !== undefined && b.comment !== null && typeof b.comment !== 'string') return { ok: false, error: 'comment must be text.', field: 'comment' };
	const comment = typeof b.comment === 'string' ? b.comment : '';
	if (comment.length > 2000) return { ok: false, error: 'Keep the comment under 2,000 characters.', field: 'comment' };
	return { ok: true, value: { alarmIds: [...new Set(ids as number[])], causeCode: b.cause.trim(), disposition: b.disposition, comment } };
}
