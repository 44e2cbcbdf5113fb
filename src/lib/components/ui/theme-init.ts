import { THEME_COOKIE, THEME_STORAGE_KEY } from './theme';

/**
 * A script to run in <head> before first paint: applies the stored theme to <html data-theme> so a
 * light-theme user never sees a dark flash (and the reverse). Order: localStorage, then the
 * `ls_theme` cookie, else the attribute the server rendered stays. It also refreshes the cookie
 * from localStorage so the server renders the right theme next time.
 *
 * Two ways to run it:
 * - With the app's strict CSP (script-src 'self', no inline scripts without a hash), load the same
 *   code from static/theme-init.js, first thing in <head> of src/app.html:
 *     <script src="%sveltekit.assets%/theme-init.js"></script>
 *   A parser-blocking script in <head> runs before first paint; tests/unit/ui/theme.test.ts keeps
 *   the file equal to THEME_INIT_SCRIPT.
 * - Without a CSP (or with this script's sha256 in script-src), inline it from the root layout:
 *     <svelte:head>{@html THEME_INIT_HTML}</svelte:head>
 *   (a constant of ours, not user input, so {@html} is safe). Do not write a literal `<script>` tag
 *   inside a template string in a .svelte file: Vite's dependency scanner reads it as the
 *   component's script block and fails.
 * The server can also render the right attribute itself from the cookie: see withHtmlTheme in
 * theme.ts; the script then only matters when storage and cookie disagree.
 */
export const THEME_INIT_SCRIPT = `(function(){try{var d=document.documentElement,k=${JSON.stringify(THEME_STORAGE_KEY)},c=${JSON.stringify(THEME_COOKIE)},t=null;try{t=localStorage.getItem(k)}catch(e){}if(t!=='dark'&&t!=='light'){var m=document.cookie.match(new RegExp('(?:^|; )'+c+'=(dark|light)'));t=m?m[1]:null}if(t==='dark'||t==='light'){d.setAttribute('data-theme',t);if(document.cookie.indexOf(c+'='+t)<0)document.cookie=c+'='+t+'; Path=/; Max-Age=31536000; SameSite=Lax'}}catch(e){}})();`;

/** THEME_INIT_SCRIPT wrapped in its tag, ready for {@html} in <svelte:head>. */
export const THEME_INIT_HTML = `<script>${THEME_INIT_SCRIPT}</script>`;
