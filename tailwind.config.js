/**
 * Lockstep's design tokens. Colours are CSS variables (set per theme in src/app.css on
 * :root[data-theme=dark|light]) so one class works in both themes; Tailwind 4 mixes opacity
 * modifiers (bg-accent/20) with color-mix(), which accepts any colour value.
 * @type {import('tailwindcss').Config}
 */
const token = (name) => `var(--ls-${name})`;

const colorNames = [
	'surface-0', // page background
	'surface-1', // panels, cards
	'surface-2', // raised, hover, table header
	'surface-3', // pressed, selected
	'line', // borders, dividers
	'ink-1', // primary text
	'ink-2', // secondary text
	'ink-3', // muted text, labels
	'accent', // brand, primary buttons, links
	'accent-ink', // text on accent
	'ok',
	'ok-soft',
	'warn',
	'warn-soft',
	'alarm',
	'alarm-soft',
	'info',
	'info-soft',
	'focus' // focus ring
];

export default {
	content: ['./src/**/*.{html,svelte,ts}'],
	theme: {
		extend: {
			colors: Object.fromEntries(colorNames.map((n) => [n, token(n)])),
			fontFamily: {
				sans: ['"Inter Variable"', 'ui-sans-serif', 'system-ui', 'sans-serif'],
				mono: ['"JetBrains Mono Variable"', 'ui-monospace', 'SFMono-Regular', 'Menlo', 'monospace']
			},
			// A dense scale for data screens: body text is 14 px, tables go down to 11 px. rem-based, so a
			// 4K control-room screen scales it with the browser zoom.
			fontSize: {
				'2xs': ['0.6875rem', { lineHeight: '1rem' }],
				xs: ['0.75rem', { lineHeight: '1.125rem' }],
				sm: ['0.8125rem', { lineHeight: '1.25rem' }],
				base: ['0.875rem', { lineHeight: '1.375rem' }],
				md: ['1rem', { lineHeight: '1.5rem' }],
				lg: ['1.125rem', { lineHeight: '1.625rem' }],
				xl: ['1.375rem', { lineHeight: '1.875rem' }],
				'2xl': ['1.75rem', { lineHeight: '2.25rem' }],
				'3xl': ['2.25rem', { lineHeight: '2.625rem' }]
			},
			borderRadius: {
				ctl: '0.3125rem', // buttons, inputs, badges
				panel: '0.5rem' // cards, dialogs
			},
			boxShadow: {
				raised: 'var(--ls-shadow-raised)'
			}
		}
	}
};
