import type { SQL } from 'drizzle-orm';
import { PgDialect } from 'drizzle-orm/pg-core';
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

const dialect = new PgDialect();

/**
 * Runs a statement as a prepared statement of its connection. drizzle's `db.execute` sends every
 * statement unnamed, so PostgreSQL parses and plans it on every run; for the statements each device
 * post runs (the reading insert, the judgement's read) planning cost more than running. Prepared,
 * each connection plans a statement's text once (PostgreSQL's plan cache may then keep a generic
 * plan). Only for statements whose text is one of a few fixed shapes: each distinct text is kept
 * per connection. Outside a transaction (a pool connection).
 */
export async function executePrepared<Row = Record<string, unknown>>(query: SQL): Promise<Row[]> {
	const { sql: text, params } = dialect.sqlToQuery(query);
	return (await sqlClient().unsafe(text, params as never[], { prepare: true })) as unknown as Row[];
}

/** `executePrepared` in the shape of drizzle's `execute`, for code that takes either. */
export const prepared = { execute: (query: SQL) => executePrepared(query) };

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
