/**
 * Runs once before the integration tests: applies the migrations to the throwaway database that
 * scripts/test.sh started, and starts the local fakes (SMTP, OAuth) in-process on free ports.
 * Environment set here reaches the test workers, which start afterwards.
 */
import path from 'node:path';
import { drizzle } from 'drizzle-orm/postgres-js';
import { migrate } from 'drizzle-orm/postgres-js/migrator';
import postgres from 'postgres';
import { startFakes } from '../fakes/server.js';

export default async function setup() {
	const url = process.env.DATABASE_URL;
	if (!url) {
		throw new Error(
			'Integration tests need DATABASE_URL. Run them through `npm test` (or `bash scripts/test.sh integration`), which starts a throwaway PostgreSQL.'
		);
	}
	const client = postgres(url, { max: 1, onnotice: () => {} });
	await migrate(drizzle(client), { migrationsFolder: path.resolve('drizzle') });
	await client.end();

	const fakes = await startFakes({ smtpPort: 0, httpPort: 0 });
	process.env.CELLSITTER_FAKES = '1';
	process.env.SMTP_URL = fakes.smtpUrl;
	process.env.FAKES_URL = fakes.httpUrl;
	// Links in e-mails come from ORIGIN (publicOrigin); scripts/test.sh sets it, a bare vitest may not.
	process.env.ORIGIN ||= 'http://127.0.0.1:3100';

	return async () => {
		await fakes.close();
	};
}
