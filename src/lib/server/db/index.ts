import { drizzle } from 'drizzle-orm/postgres-js';
import postgres from 'postgres';
import { serverEnv } from '../env';
import * as schema from './schema';

function connect() {
	const client = postgres(serverEnv().DATABASE_URL, {
		max: 10,
		onnotice: () => {} // postgres.js would print every NOTICE (stack.md pitfall 4)
	});
	return { client, db: drizzle(client, { schema }) };
}

let connection: ReturnType<typeof connect> | undefined;

function connection_() {
	connection ??= connect();
	return connection;
}

/** The drizzle database, connected on first use. */
export const db = new Proxy({} as ReturnType<typeof connect>['db'], {
	get: (_, key) => Reflect.get(connection_().db, key)
});

/** The underlying postgres.js client, for libraries that bring their own SQL. */
export function sqlClient() {
	return connection_().client;
}

export type Db = typeof db;
export type Tx = Parameters<Parameters<Db['transaction']>[0]>[0];

/** Closes the pool (the built server does not exit while it is open — stack.md pitfall 2). */
export async function closeDb() {
	if (!connection) return;
	const { client } = connection;
	connection = undefined;
	await client.end({ timeout: 5 });
}

export { schema };
