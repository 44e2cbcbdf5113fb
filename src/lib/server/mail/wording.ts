/** Sentences every Lockstep mail carries, in one place so HTML and text parts say the same. */
import { GAS_NAMES } from './alarm-facts.ts';

export const RECOMMENDATION_NOTE =
	'Lockstep recommends and records; it never acts on a tool. Holding or releasing a chamber is decided under the fab’s own procedures by qualified engineers.';

export function leakReminder(gases: string[]): { title: string; body: string } {
	const names = gases.map((g) => GAS_NAMES[g] ?? g).join(' and ');
	return {
		title: 'Leak-like signature — Lockstep is not a safety system',
		body: `Lines of ${names} lead at least one item below. The site’s gas detection, interlocks and safety procedures are authoritative; follow them, not this mail.`
	};
}

export const ratio = (v: number | null) => (v === null || !Number.isFinite(v) ? '—' : v.toFixed(2));

export function age(hours: number): string {
	if (hours < 1) return `${Math.max(1, Math.round(hours * 60))} min`;
	if (hours < 48) return `${Math.round(hours)} h`;
	return `${(hours / 24).toFixed(1)} days`;
}

export function plural(n: number, one: string, many = `${one}s`): string {
	return `${n.toLocaleString('en')} ${n === 1 ? one : many}`;
}
