/**
 * Sign-in throttling with counters in PostgreSQL (rate-limiter-flexible, table `rate_limits`).
 * Attempts count per (account, client address) — 5 failures in 15 minutes — so an attacker
 * elsewhere cannot lock an owner out of their own bench; a wider per-address limit (50 failures an
 * hour) stops one address from trying many accounts. The client address is adapter-node's
 * `getClientAddress()`: behind a proxy, set ADDRESS_HEADER / XFF_DEPTH (docs/configuration.md),
 * or every client shares the proxy's address and its allowance.
 */
import { RateLimiterRes } from 'rate-limiter-flexible';
import { pgLimiter } from './pg-limiter';

export const PAIR_FAILURES = 5;
export const PAIR_WINDOW_SECONDS = 15 * 60;
export const ADDRESS_FAILURES = 50;
export const ADDRESS_WINDOW_SECONDS = 60 * 60;

const byPair = pgLimiter('signin-pair', PAIR_FAILURES, PAIR_WINDOW_SECONDS);
const byAddress = pgLimiter('signin-addr', ADDRESS_FAILURES, ADDRESS_WINDOW_SECONDS);

const pairKey = (email: string, address: string) => `${email.toLowerCase()}|${address}`;

export type SignInAttempt = { allowed: true } | { allowed: false; retryAfterSeconds: number };

/**
 * Takes one attempt from the pair's and the address's allowance BEFORE the password is checked.
 * The counters rise atomically in PostgreSQL (one upsert each), so parallel guesses cannot all
 * read "4 so far" and all be checked: of any number sent at once, at most PAIR_FAILURES get
 * `allowed`. A refused attempt gives back what it took from the other counter, so the counters
 * keep meaning "attempts that reached a password check". Report the outcome with
 * `signInSucceeded` (refunds) — a failure needs nothing more, its point is already spent.
 */
export async function takeSignInAttempt(email: string, address: string): Promise<SignInAttempt> {
	const key = pairKey(email, address);
	const pair = await consumed(byPair.consume(key));
	if (!pair.ok) return { allowed: false, retryAfterSeconds: retryAfter(pair.res) };
	const addr = await consumed(byAddress.consume(address));
	if (!addr.ok) {
		await byPair.reward(key, 1);
		return { allowed: false, retryAfterSeconds: retryAfter(addr.res) };
	}
	return { allowed: true };
}

/** A right password: the pair's failures are cleared, and the address gets its attempt back. */
export async function signInSucceeded(email: string, address: string): Promise<void> {
	await Promise.all([byPair.delete(pairKey(email, address)), byAddress.reward(address, 1)]);
}

/** rate-limiter-flexible rejects with a RateLimiterRes when over the limit, with an Error on failure. */
async function consumed(p: Promise<RateLimiterRes>): Promise<{ ok: true } | { ok: false; res: RateLimiterRes }> {
	try {
		await p;
		return { ok: true };
	} catch (e) {
		if (e instanceof RateLimiterRes) return { ok: false, res: e };
		throw e;
	}
}

function retryAfter(res: RateLimiterRes): number {
	return Math.max(1, Math.ceil(res.msBeforeNext / 1000));
}
