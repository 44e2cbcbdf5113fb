/**
 * The acknowledge and close forms of the alarm screens (queue and detail page share them): parse the
 * submitted fields, call alarms.ts, and turn its refusals into field errors. All or nothing: the
 * server functions run in one transaction.
 */
import { acknowledgeAlarms, AlarmError, closeAlarm } from '../alarms.ts';
import { fail } from '@sveltejs/kit';
import { db } from '../db.ts';

export type FormOutcome =
	| { ok: true; message: string; ids: number[] }
	| { ok: false; errors: Record<string, string>; values: Record<string, string | string[]> };

function ids(form: FormData, name: string): number[] | null {
	const raw = form.getAll(name).map((v) => String(v).trim()).filter(Boolean);
	const out = raw.map(Number);
	return out.every((n) => Number.isInteger(n) && n > 0) ? out : null;
}

export async function submitAcknowledge(form: FormData, userId: string): Promise<FormOutcome> {
	const alarmIds = ids(form, 'alarmId');
	const values = {
		alarmId: form.getAll('alarmId').map(String),
		causeCode: String(form.get('causeCode') ?? ''),
		disposition: String(form.get('disposition') ?? ''),
		comment: String(form.get('comment') ?? '')
	};
	const errors: Record<string, string> = {};
	if (alarmIds === null) errors.alarmIds = 'The alarm selection is not valid; reload the page and try again.';
	else if (alarmIds.length > 200) errors.alarmIds = 'Acknowledge at most 200 alarms at once.';
	if (!values.causeCode) errors.causeCode = 'Choose a cause code from the list.';
	if (!values.disposition) errors.disposition = 'Choose a disposition.';
	if (Object.keys(errors).length || alarmIds === null) return { ok: false, errors, values };
	try {
		const r = await acknowledgeAlarms(db(), { alarmIds: [...new Set(alarmIds)], userId, causeCode: values.causeCode, disposition: values.disposition, comment: values.comment });
		const n = r.acknowledged.length;
		return { ok: true, ids: r.acknowledged, message: n === 1 ? `Alarm #${r.acknowledged[0]} acknowledged.` : `${n} alarms acknowledged together.` };
	} catch (e) {
		if (e instanceof AlarmError) return { ok: false, errors: { [e.field ?? 'form']: e.message }, values };
		throw e;
	}
}

export async function submitClose(form: FormData, userId: string): Promise<FormOutcome> {
	const id = ids(form, 'alarmId');
	const values = { alarmId: form.getAll('alarmId').map(String), comment: String(form.get('comment') ?? '') };
	if (id === null || id.length !== 1) return { ok: false, errors: { alarmId: 'Choose one alarm to close.' }, values };
	if (values.comment.length > 2000) return { ok: false, errors: { comment: 'Keep the comment under 2,000 characters.' }, values };
	try {
		await closeAlarm(db(), { alarmId: id[0], userId, comment: values.comment });
		return { ok: true, ids: id, message: `Alarm #${id[0]} closed. A new violation will open a new alarm.` };
	} catch (e) {
		if (e instanceof AlarmError) return { ok: false, errors: { [e.field ?? 'form']: e.message }, values };
		throw e;
	}
}

type ActionEvent = { request: Request; locals: App.Locals };

/**
 * The acknowledge and close form actions, shared by the alarm queue, the alarm page and the wafer
 * page (each route lists them in the route policy; the role is checked there).
 */
export async function acknowledgeAction({ request, locals }: ActionEvent) {
	const r = await submitAcknowledge(await request.formData(), locals.user!.id);
	if (!r.ok) return fail(400, { action: 'acknowledge' as const, errors: r.errors, values: r.values });
	return { action: 'acknowledge' as const, message: r.message, ids: r.ids };
}

export async function closeAction({ request, locals }: ActionEvent) {
	const r = await submitClose(await request.formData(), locals.user!.id);
	if (!r.ok) return fail(400, { action: 'close' as const, errors: r.errors, values: r.values });
	return { action: 'close' as const, message: r.message, ids: r.ids };
}
