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
		// SvelteKit's CSRF check (a form POST, PUT, PATCH or DELETE whose Origin is not ours gets 403)
		// stays at its default, on: `csrf.checkOrigin` is never set here (docs/security.md).
		csp: {
			// 'auto': a fresh nonce per response on SvelteKit's own inline start-up script (and on the
			// theme script in app.html, via %sveltekit.nonce%); hashes if a page were ever prerendered.
			mode: 'auto',
			directives: {
				'default-src': ['self'],
				// No 'unsafe-inline', no 'unsafe-eval': only our own files and the nonced scripts run.
				'script-src': ['self'],
				// Style attributes need 'unsafe-inline': Svelte writes dynamic style="" attributes into the
				// server-rendered HTML (the plan timeline's bars, progress bars' widths, SvelteKit's own
				// route announcer), and hydration keeps an attribute the browser refused, so the bars would
				// never be placed. A style attribute cannot run script or load anything img-src and
				// font-src do not allow. <style> elements and stylesheets stay 'self' only (style-src-elem):
				// an injected <style> cannot read the page with attribute selectors. `style-src` keeps
				// 'unsafe-inline' only for browsers older than style-src-elem / -attr, which ignore those two.
				'style-src': ['self', 'unsafe-inline'],
				'style-src-elem': ['self'],
				'style-src-attr': ['unsafe-inline'],
				// QR labels are inline <svg> elements, attachments' pictures come from our own routes.
				'img-src': ['self'],
				// Inter is bundled from @fontsource-variable into /_app/immutable/assets.
				'font-src': ['self'],
				// fetch, the API and the run screen's server-sent events: our own origin only.
				'connect-src': ['self'],
				// The service worker (src/service-worker.ts); papaparse's blob: worker is never turned on.
				'worker-src': ['self'],
				'manifest-src': ['self'],
				'object-src': ['none'],
				'frame-src': ['none'],
				'base-uri': ['self'],
				// Our forms post to our own routes; OAuth sign-in leaves by a link and a redirect, not a form.
				'form-action': ['self'],
				'frame-ancestors': ['none']
			}
		},
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
