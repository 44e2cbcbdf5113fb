import { formatTime } from '$lib/components/display/format';

/** Times on the mail admin page, in the viewer's zone. */
export function formatWhen(ms: number | null, timeZone: string): string {
	if (ms === null) return '—';
	return formatTime(ms, timeZone);
}
