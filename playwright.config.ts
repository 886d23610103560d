// Browser tests against the BUILT app, which scripts/test.sh starts (no webServer here):
// `npm test` or `npm run test:e2e`. To run against another server, set E2E_BASE_URL.
import { defineConfig } from '@playwright/test';

const isCI = Boolean(process.env.CI);

export default defineConfig({
	testDir: 'tests/e2e',
	// One demo server for the run (the files that read the demo's finished sessions share it).
	globalSetup: './tests/e2e/global-setup.ts',
	outputDir: 'test-results/e2e',
	forbidOnly: isCI,
	retries: isCI ? 1 : 0,
	// Two cores: two browsers plus the server and PostgreSQL is what fits.
	workers: 2,
	timeout: 30_000,
	expect: { timeout: 5_000 },
	reporter: [['list'], ['json', { outputFile: process.env.E2E_JSON_REPORT ?? 'test-results/e2e.json' }]],
	use: {
		baseURL: process.env.E2E_BASE_URL ?? 'http://127.0.0.1:3100',
		browserName: 'chromium',
		trace: 'retain-on-failure',
		// The app's service worker caches the whole app shell in every new browser context; only the
		// files that test it (offline, push) let it run: test.use({ serviceWorkers: 'allow' }).
		serviceWorkers: 'block',
		screenshot: 'only-on-failure',
		launchOptions: {
			// Debian's chromium (apt-get install chromium); Playwright's own browsers are never
			// downloaded. Playwright adds --no-sandbox and --headless itself.
			executablePath: '/usr/bin/chromium',
			args: [
				'--disable-gpu',
				'--disable-quic',
				'--no-first-run',
				'--disable-background-networking',
				'--disable-component-update',
				'--disable-sync'
			]
		}
	}
});
