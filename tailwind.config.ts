import type { Config } from 'tailwindcss';
import plugin from 'tailwindcss/plugin';

/**
 * Cellsitter's look (shared docs: look.md) — the one place its colours live. Each token is a CSS
 * variable with a light and a dark value; the theme follows the system unless the switch sets
 * <html data-theme="light|dark">.
 */
export const tokens = {
	surface: { light: '#f7f5f2', dark: '#151413' },
	panel: { light: '#ffffff', dark: '#1e1c1a' },
	ink: { light: '#1c1a17', dark: '#ece8e2' },
	'ink-muted': { light: '#6b655d', dark: '#a39b90' },
	line: { light: '#e4dfd8', dark: '#2e2b27' },
	// Darker than look.md's #b5622a in light: that failed WCAG AA (4.1:1) as text on the surface.
	copper: { light: '#a65723', dark: '#e08a4f' },
	// Text on a copper button: white on light copper, near-black on the brighter dark copper.
	'on-copper': { light: '#ffffff', dark: '#151413' },
	steady: { light: '#2f8f6f', dark: '#4fb58f' },
	watch: { light: '#a87a0c', dark: '#d9a72b' },
	'act-now': { light: '#c43c2e', dark: '#ef6a5a' },
	idle: { light: '#5b6770', dark: '#8e9aa3' }
} as const;

type Token = keyof typeof tokens;
const names = Object.keys(tokens) as Token[];
const vars = (mode: 'light' | 'dark') =>
	Object.fromEntries(names.map((n) => [`--cs-${n}`, tokens[n][mode]]));

export default {
	content: ['./src/**/*.{html,svelte,ts}'],
	theme: {
		extend: {
			colors: Object.fromEntries(names.map((n) => [n, `var(--cs-${n})`])),
			fontFamily: {
				sans: ['"Inter Variable"', 'Inter', 'system-ui', 'sans-serif']
			}
		}
	},
	plugins: [
		plugin(({ addBase }) => {
			addBase({
				':root': { ...vars('light'), colorScheme: 'light' },
				'@media (prefers-color-scheme: dark)': {
					':root:not([data-theme="light"])': { ...vars('dark'), colorScheme: 'dark' }
				},
				':root[data-theme="dark"]': { ...vars('dark'), colorScheme: 'dark' }
			});
		})
	]
} satisfies Config;
