// Applies drizzle/ migrations to DATABASE_URL (the server also does this at start).
import path from 'node:path';
import { drizzle } from 'drizzle-orm/postgres-js';
import { migrate } from 'drizzle-orm/postgres-js/migrator';
import postgres from 'postgres';

const url = process.env.DATABASE_URL;
if (!url) {
	console.error('Set DATABASE_URL first, e.g. DATABASE_URL=$(bash scripts/pg.sh url) npm run db:migrate');
	process.exit(2);
}
const client = postgres(url, { max: 1, onnotice: () => {} });
try {
	await migrate(drizzle(client), { migrationsFolder: path.resolve('drizzle') });
	console.log('Migrations applied.');
} finally {
	await client.end();
}
