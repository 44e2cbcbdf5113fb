/** Times on the mail admin page, in the viewer's zone. */
export function formatWhen(ms: number | null, timeZone: string): string {
	if (ms === null) return '—';
	return new Intl.DateTimeFormat('en-GB', { timeZone, dateStyle: 'medium', timeStyle: 'short' }).format(new Date(ms));
}
