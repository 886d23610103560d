import path from 'node:path';
import { migrate } from 'drizzle-orm/postgres-js/migrator';
import { db } from './db';

/** Applies the SQL migrations under drizzle/ (the same journal drizzle-kit writes). */
export async function applyMigrations(folder = path.resolve('drizzle')): Promise<void> {
	await migrate(db, { migrationsFolder: folder });
}
