import type { RequestEvent } from '@sveltejs/kit';

/** The client's address as adapter-node sees it (set ADDRESS_HEADER behind a proxy). */
export function clientAddress(event: Pick<RequestEvent, 'getClientAddress'>): string {
	try {
		return event.getClientAddress();
	} catch {
		return 'unknown';
	}
}
