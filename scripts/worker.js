#!/usr/bin/env node
// `npm run worker`: runs Cellsitter's background jobs (pg-boss) in a process of their own.
//
// The jobs are the app's own TypeScript under src/lib/server (with its $lib imports), so this
// loads them through Vite's server-side module runner, the same transform the dev server and the
// tests use. It needs the app's environment (DATABASE_URL, SMTP_URL, MAIL_FROM…; docs/configuration.md);
// run the app itself with CELLSITTER_JOBS=off so jobs are worked here only.
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { createServer, createServerModuleRunner } from 'vite';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');

const vite = await createServer({
	root,
	// Only the alias is needed: the job modules import no Svelte, $app or $env modules.
	configFile: false,
	resolve: { alias: { $lib: path.join(root, 'src/lib') } },
	server: { middlewareMode: true, hmr: false, ws: false, watch: null },
	appType: 'custom',
	logLevel: 'warn',
	optimizeDeps: { noDiscovery: true, include: [] }
});
const runner = createServerModuleRunner(vite.environments.ssr, { hmr: false });

let code = 0;
try {
	const { runWorker } = await runner.import('/src/lib/server/jobs/worker.ts');
	await runWorker();
} catch (error) {
	console.error(error instanceof Error ? (error.stack ?? error.message) : error);
	code = 1;
} finally {
	await runner.close();
	await vite.close();
}
process.exit(code);
