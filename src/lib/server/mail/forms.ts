/** Form ⇄ model for the mail pages (routes stay thin). */
import type { Knex } from 'knex';
import { db } from '../db.ts';
import type { Subscription, SubscriptionInput } from './subscriptions.ts';
import { zonedInstant } from './zones.ts';

const str = (f: FormData, name: string, max = 300) => String(f.get(name) ?? '').slice(0, max);

export function subscriptionFromForm(f: FormData): SubscriptionInput {
	const codes = (name: string) => [...new Set(f.getAll(name).map((v) => String(v).trim()).filter(Boolean))].slice(0, 1000);
	return {
		email: str(f, 'email', 300).trim(),
		areaCodes: codes('area'),
		chamberCodes: codes('chamber'),
		digestEnabled: f.get('digestEnabled') === 'on',
		digestTime: str(f, 'digestTime', 10).trim(),
		timeZone: str(f, 'timeZone', 80).trim(),
		alarmMails: f.get('alarmMails') === 'on',
		alarmMinSeverity: str(f, 'alarmMinSeverity', 20),
		weeklySummary: f.get('weeklySummary') === 'on'
	};
}

export function subscriptionToInput(s: Subscription): SubscriptionInput {
	return {
		email: s.email,
		areaCodes: s.areaCodes,
		chamberCodes: s.chamberCodes,
		digestEnabled: s.digestEnabled,
		digestTime: s.digestTime,
		timeZone: s.timeZone,
		alarmMails: s.alarmMails,
		alarmMinSeverity: s.alarmMinSeverity,
		weeklySummary: s.weeklySummary
	};
}

/** Areas with their chambers, for the scope pickers. */
export async function scopeOptions(k: Knex = db()): Promise<{ code: string; name: string; chambers: string[] }[]> {
	const areas = await k('areas').orderBy('code').select('id', 'code', 'name');
	const chambers = await k('chambers as c').join('tools as t', 't.id', 'c.tool_id').orderBy('c.code').select('c.code', 't.area_id');
	return areas.map((a) => ({ code: a.code, name: a.name, chambers: chambers.filter((c) => c.area_id === a.id).map((c) => c.code) }));
}

export function timeZoneNames(): string[] {
	const all = (Intl as unknown as { supportedValuesOf?: (k: string) => string[] }).supportedValuesOf?.('timeZone') ?? [];
	return all.includes('UTC') ? all : ['UTC', ...all];
}

/** A typed date-time ("2026-12-07 06:30", or with a T) read in `tz`; null when malformed. */
export function parseLocalDateTime(s: string, tz: string): number | null {
	const m = /^(\d{4})-(\d{2})-(\d{2})[T ](\d{2}):(\d{2})$/.exec(s.trim());
	if (!m) return null;
	const [y, mo, d, h, mi] = m.slice(1).map(Number);
	if (mo < 1 || mo > 12 || d < 1 || d > 31 || h > 23 || mi > 59) return null;
	return zonedInstant(y, mo, d, h, mi, tz);
}
