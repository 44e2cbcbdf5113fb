/**
 * Theme choice shared by the toggle, the pre-paint script and the server: the choice lives on
 * <html data-theme>, in localStorage and in a cookie the server reads to render the right theme.
 */
export type Theme = 'dark' | 'light';

export const THEME_COOKIE = 'ls_theme';
export const THEME_STORAGE_KEY = 'ls_theme';
/** The control room is the default setting. */
export const DEFAULT_THEME: Theme = 'dark';
const ONE_YEAR_S = 60 * 60 * 24 * 365;

export function isTheme(value: unknown): value is Theme {
	return value === 'dark' || value === 'light';
}

/** The theme named by a cookie value, or the default for anything else (absent, tampered). */
export function themeFromCookie(value: string | undefined | null): Theme {
	return isTheme(value) ? value : DEFAULT_THEME;
}

/**
 * Sets data-theme on <html> and remembers the choice. Browser only. Storage can be refused
 * (private mode, blocked cookies): the page still switches, the choice is just not kept.
 */
export function applyTheme(theme: Theme): void {
	document.documentElement.dataset.theme = theme;
	try {
		localStorage.setItem(THEME_STORAGE_KEY, theme);
	} catch {
		// storage refused: keep the cookie and the attribute
	}
	const secure = location.protocol === 'https:' ? '; Secure' : '';
	document.cookie = `${THEME_COOKIE}=${theme}; Path=/; Max-Age=${ONE_YEAR_S}; SameSite=Lax${secure}`;
}

/** The theme currently on <html>. Browser only. */
export function currentTheme(): Theme {
	const t = document.documentElement.dataset.theme;
	return isTheme(t) ? t : DEFAULT_THEME;
}

/**
 * Puts the theme on the <html> tag of a rendered page (for `transformPageChunk` in
 * hooks.server.ts), replacing the data-theme that app.html carries. Pure string work, server-safe.
 */
export function withHtmlTheme(html: string, theme: Theme): string {
	return html.replace(/(<html\b[^>]*?\sdata-theme=")(?:dark|light)(")/, `$1${theme}$2`);
}

/**
 * Calls `listener` whenever <html data-theme> changes (the toggle, another script), for code that
 * colours in JavaScript (heat cells, charts). Browser only. Returns the unsubscribe function, so it
 * fits `$effect(() => onThemeChange((t) => (theme = t)))`.
 */
export function onThemeChange(listener: (theme: Theme) => void): () => void {
	const observer = new MutationObserver(() => listener(currentTheme()));
	observer.observe(document.documentElement, { attributes: true, attributeFilter: ['data-theme'] });
	return () => observer.disconnect();
}
