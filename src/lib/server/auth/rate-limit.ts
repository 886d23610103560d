/**
 * Sign-in throttling with counters in PostgreSQL (rate-limiter-flexible, table `rate_limits`).
 * Failures count per (account, client address) — 5 in 15 minutes — so an attacker elsewhere
 * cannot lock an owner out of their own bench; a wider per-address limit stops one address
 * from trying many accounts.
 */
import { RateLimiterPostgres, RateLimiterRes } from 'rate-limiter-flexible';
import { sqlClient } from '../db';

export const PAIR_FAILURES = 5;
export const PAIR_WINDOW_SECONDS = 15 * 60;
export const ADDRESS_FAILURES = 50;
export const ADDRESS_WINDOW_SECONDS = 60 * 60;

// rate-limiter-flexible speaks node-postgres' query({ text, values }) → { rows, rowCount }; postgres.js's
// unsafe() takes the same $n placeholders with bound parameters.
const store = {
	query: async (q: { text: string; values?: unknown[] }) => {
		const rows = [...(await sqlClient().unsafe(q.text, (q.values ?? []) as never[]))];
		return { rows, rowCount: rows.length };
	}
};

function limiter(keyPrefix: string, points: number, duration: number) {
	return new RateLimiterPostgres({
		storeClient: store,
		storeType: 'pool',
		tableName: 'rate_limits',
		tableCreated: true,
		clearExpiredByTimeout: false,
		keyPrefix,
		points,
		duration
	});
}

const byPair = limiter('signin-pair', PAIR_FAILURES, PAIR_WINDOW_SECONDS);
const byAddress = limiter('signin-addr', ADDRESS_FAILURES, ADDRESS_WINDOW_SECONDS);

const pairKey = (email: string, address: string) => `${email.toLowerCase()}|${address}`;

/** Seconds to wait before another sign-in attempt, or 0 when one is allowed now. */
export async function signInRetryAfter(email: string, address: string): Promise<number> {
	const [pair, addr] = await Promise.all([byPair.get(pairKey(email, address)), byAddress.get(address)]);
	const waits = [
		blockedFor(pair, PAIR_FAILURES),
		blockedFor(addr, ADDRESS_FAILURES)
	];
	return Math.max(...waits);
}

function blockedFor(res: RateLimiterRes | null, points: number): number {
	if (!res || res.consumedPoints < points) return 0;
	return Math.max(1, Math.ceil(res.msBeforeNext / 1000));
}

/** Counts one failed sign-in for the pair and the address. */
export async function recordSignInFailure(email: string, address: string): Promise<void> {
	await Promise.all([
		byPair.penalty(pairKey(email, address), 1),
		byAddress.penalty(address, 1)
	]);
}

/** A successful sign-in clears the pair's failures (not the address's). */
export async function clearSignInFailures(email: string, address: string): Promise<void> {
	await byPair.delete(pairKey(email, address));
}
