/**
 * Playwright's global setup: one demo server for the whole run (tests/e2e/demo-server.ts), shared
 * by the files that read the demo's finished sessions, stopped by the returned teardown.
 */
import { startSharedDemoServer } from './demo-server';

export default async function globalSetup() {
	return startSharedDemoServer();
}
