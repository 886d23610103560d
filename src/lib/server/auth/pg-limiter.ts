/** rate-limiter-flexible counters in PostgreSQL's `rate_limits` table, over postgres.js. */
import { RateLimiterPostgres } from 'rate-limiter-flexible';
import { sqlClient } from '../db';

// rate-limiter-flexible speaks node-postgres' query({ text, values }) → { rows, rowCount }; postgres.js's
// unsafe() takes the same $n placeholders with bound parameters.
const store = {
	query: async (q: { text: string; values?: unknown[] }) => {
		const rows = [...(await sqlClient().unsafe(q.text, (q.values ?? []) as never[]))];
		return { rows, rowCount: rows.length };
	}
};

/**
 * `points` per `durationSeconds` for each key under `keyPrefix`. The table comes from our
 * migrations; old rows are deleted by the purge-expired job, not by a timer in every process.
 */
export function pgLimiter(keyPrefix: string, points: number, durationSeconds: number): RateLimiterPostgres {
	return new RateLimiterPostgres({
		storeClient: store,
		storeType: 'pool',
		tableName: 'rate_limits',
		tableCreated: true,
		clearExpiredByTimeout: false,
		keyPrefix,
		points,
		duration: durationSeconds
	});
}
