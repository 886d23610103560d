/**
 * Deletes rows whose time is over, so the tables that grow with every sign-in and reset stay
 * small: rate-limit counters past their window, expired sessions, used or expired reset
 * tokens, first OAuth sign-ins never finished. Nothing here is history anyone reads.
 */
import { isNotNull, lt, or, sql } from 'drizzle-orm';
import { db } from '../db';
import { authSessions, oauthPending, passwordResetTokens, rateLimits } from '../db/schema';
import { defineJob } from './define';

export type PurgeCounts = { rateLimits: number; sessions: number; resetTokens: number; pendingOAuth: number };

export async function purgeExpiredRows(now = new Date()): Promise<PurgeCounts> {
	return db.transaction(async (tx) => {
		// rate-limiter-flexible stores `expire` in epoch milliseconds; NULL means "no end" (kept).
		const limits = await tx
			.delete(rateLimits)
			.where(lt(rateLimits.expire, sql`${now.getTime()}::bigint`))
			.returning({ key: rateLimits.key });
		const sessions = await tx.delete(authSessions).where(lt(authSessions.expiresAt, now)).returning({ id: authSessions.id });
		const tokens = await tx
			.delete(passwordResetTokens)
			.where(or(isNotNull(passwordResetTokens.usedAt), lt(passwordResetTokens.expiresAt, now)))
			.returning({ id: passwordResetTokens.tokenHash });
		const pending = await tx
			.delete(oauthPending)
			.where(lt(oauthPending.expiresAt, now))
			.returning({ id: oauthPending.tokenHash });
		return {
			rateLimits: limits.length,
			sessions: sessions.length,
			resetTokens: tokens.length,
			pendingOAuth: pending.length
		};
	});
}

export const purgeExpired = defineJob<{ now?: string }>({
	// Hourly, at minute 17 so it does not meet every other hourly job on the hour.
	schedule: { cron: '17 * * * *' },
	options: { retryLimit: 1, expireInSeconds: 5 * 60 },
	handle: async (data) => purgeExpiredRows(data.now ? new Date(data.now) : new Date())
});
