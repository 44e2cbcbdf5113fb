import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { THEME_INIT_HTML, THEME_INIT_SCRIPT } from '../../../src/lib/components/ui/theme-init';
import { themeFromCookie, withHtmlTheme } from '../../../src/lib/components/ui/theme';

/** Runs the pre-paint script against a stand-in document and storage; returns what it set. */
function runInit(stored: string | null, cookie: string, storageThrows = false) {
	const attrs: Record<string, string> = { 'data-theme': 'dark' };
	const doc = {
		documentElement: { setAttribute: (k: string, v: string) => (attrs[k] = v) },
		cookie
	};
	const storage = {
		getItem: () => {
			if (storageThrows) throw new Error('SecurityError');
			return stored;
		}
	};
	new Function('document', 'localStorage', THEME_INIT_SCRIPT)(doc, storage);
	return { theme: attrs['data-theme'], cookie: doc.cookie };
}

describe('pre-paint theme script', () => {
	it('applies the stored choice and copies it to the cookie', () => {
		const r = runInit('light', '');
		expect(r.theme).toBe('light');
		expect(r.cookie).toMatch(/^ls_theme=light; Path=\/; Max-Age=\d+; SameSite=Lax$/);
	});
	it('falls back to the cookie when storage is empty or refused', () => {
		expect(runInit(null, 'a=1; ls_theme=light').theme).toBe('light');
		expect(runInit(null, 'ls_theme=light', true).theme).toBe('light');
	});
	it('leaves the server-rendered theme alone for values it does not know', () => {
		expect(runInit('purple', 'ls_theme=blue').theme).toBe('dark');
		expect(runInit(null, 'not_ls_theme=light').theme).toBe('dark');
	});
	it('comes wrapped in one script tag for {@html}', () => {
		expect(THEME_INIT_HTML).toBe(`<script>${THEME_INIT_SCRIPT}</script>`);
	});
});

describe('server-side theme helpers', () => {
	it('reads only the two known values from the cookie', () => {
		expect(themeFromCookie('light')).toBe('light');
		expect(themeFromCookie('dark')).toBe('dark');
		expect(themeFromCookie('<script>')).toBe('dark');
		expect(themeFromCookie(undefined)).toBe('dark');
	});
	it('rewrites data-theme on the html tag only', () => {
		const page = '<!doctype html>\n<html lang="en" data-theme="dark">\n<body data-theme="dark">';
		expect(withHtmlTheme(page, 'light')).toBe(
			'<!doctype html>\n<html lang="en" data-theme="light">\n<body data-theme="dark">'
		);
		expect(withHtmlTheme('<p>no html tag</p>', 'light')).toBe('<p>no html tag</p>');
	});
});

it('ships the same pre-paint script as a static file (for script-src self)', () => {
	const file = readFileSync(new URL('../../../static/theme-init.js', import.meta.url), 'utf8');
	expect(file.split('\n').slice(1).join('\n').trim()).toBe(THEME_INIT_SCRIPT);
});
