/**
 * Headers added to every response. The Content-Security-Policy itself is set by SvelteKit (kit.csp in
 * svelte.config.js) so that its inline hydration script carries a hash; these are the rest.
 */
export function securityHeaders(): Record<string, string> {
	return {
		'x-content-type-options': 'nosniff',
		'referrer-policy': 'same-origin',
		'x-frame-options': 'DENY',
		'permissions-policy': 'camera=(), microphone=(), geolocation=()'
	};
}
