import adapter from '@sveltejs/adapter-node';
import { vitePreprocess } from '@sveltejs/vite-plugin-svelte';

/** @type {import('@sveltejs/kit').Config} */
const config = {
	preprocess: vitePreprocess(),
	compilerOptions: {
		// Runes for our own components only; forcing them on libraries breaks some of them.
		runes: ({ filename }) => (filename.split(/[/\\]/).includes('node_modules') ? undefined : true)
	},
	kit: {
		// The tests build elsewhere so they never pull files from under a running `npm start`.
		adapter: adapter({ out: process.env.CELLSITTER_BUILD_DIR || 'build' }),
		typescript: {
			// Type-check against our declaration of the test-only `odex`, not its unstrict source.
			config: (config) => {
				config.compilerOptions.paths = { ...config.compilerOptions.paths, odex: ['../src/types/odex.d.ts'] };
				return config;
			}
		}
	}
};

export default config;
