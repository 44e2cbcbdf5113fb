import { describe, expect, it } from 'vitest';
import { newErrorId, reportUnexpected } from '../../../src/lib/server/unexpected-error';

const event = { request: { method: 'GET' }, url: new URL('http://x/alarms?state=open'), route: { id: '/alarms' } };

describe('an unexpected error', () => {
	it('is logged with its id, path and stack, and answered with the same id and none of its text', () => {
		const lines: string[] = [];
		const err = new Error('SQLITE_CORRUPT: database disk image is malformed at /var/lib/lockstep/db.sqlite');
		const out = reportUnexpected({ error: err, status: 500, message: 'Internal Error', event }, (l) => lines.push(l));
		expect(out.errorId).toMatch(/^[0-9A-HJKMNP-TV-Z]{4}-[0-9A-HJKMNP-TV-Z]{4}$/);
		expect(lines).toHaveLength(1);
		expect(lines[0]).toContain(out.errorId);
		expect(lines[0]).toContain('GET /alarms');
		expect(lines[0]).toContain('SQLITE_CORRUPT');
		expect(lines[0]).toContain('unexpected-error.test.ts'); // the stack
		// what the page shows: no error text, no path, no stack
		expect(out.message).not.toMatch(/SQLITE|\/var\/lib|at .*\.ts|Error:/);
	});

	it('says "no page" for an unmatched address, without an id or a log line', () => {
		const lines: string[] = [];
		const out = reportUnexpected({ error: new Error('Not found: /nope'), status: 404, message: 'Not Found', event }, (l) => lines.push(l));
		expect(out).toEqual({ message: 'There is no page at this address.' });
		expect(lines).toHaveLength(0);
	});

	it('draws ids that differ (40 random bits)', () => {
		const ids = new Set(Array.from({ length: 500 }, newErrorId));
		expect(ids.size).toBe(500);
	});
});

describe('the hook', () => {
	it('hooks.server.ts handleError answers an id and logs it', async () => {
		const { handleError } = await import('../../../src/hooks.server');
		const lines: string[] = [];
		const orig = console.error;
		console.error = (l: string) => lines.push(l);
		try {
			const out = (await handleError({ error: new Error('boom: secret detail'), status: 500, message: 'Internal Error', event: event as never })) as { message: string; errorId: string };
			expect(out.errorId).toBeTruthy();
			expect(out.message).not.toContain('boom');
			expect(lines.join('\n')).toContain(out.errorId);
			expect(lines.join('\n')).toContain('boom: secret detail');
		} finally {
			console.error = orig;
		}
	});
});
