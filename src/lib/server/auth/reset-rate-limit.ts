/**
 * Password-reset throttling, counted in PostgreSQL like sign-in (rate-limiter-flexible, table
 * `rate_limits`): 3 requests per e-mail address per hour, so nobody can flood a mailbox, and 20
 * per client address per hour, so one address cannot sweep through many mailboxes. Every request
 * counts, whether or not the address has an account, so the limit tells nothing either.
 */
import { RateLimiterRes } from 'rate-limiter-flexible';
import { pgLimiter } from './pg-limiter';

export const RESETS_PER_EMAIL = 3;
export const RESETS_PER_ADDRESS = 20;
export const RESET_WINDOW_SECONDS = 60 * 60;

const byEmail = pgLimiter('reset-email', RESETS_PER_EMAIL, RESET_WINDOW_SECONDS);
const byAddress = pgLimiter('reset-addr', RESETS_PER_ADDRESS, RESET_WINDOW_SECONDS);

const waitOf = (res: RateLimiterRes) => Math.max(1, Math.ceil(res.msBeforeNext / 1000));

/**
 * Counts one reset request; returns 0 when it may go ahead, else the seconds to wait. The client
 * address is counted first, so an address already over its limit does not use up the e-mail's.
 */
export async function consumeResetRequest(email: string, address: string): Promise<number> {
	try {
		await byAddress.consume(address, 1);
		await byEmail.consume(email.trim().toLowerCase(), 1);
		return 0;
	} catch (e) {
		if (e instanceof RateLimiterRes) return waitOf(e);
		throw e;
	}
}
