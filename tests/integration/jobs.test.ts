// Background jobs (pg-boss 10) against the real test database: the hourly purge, its schedule,
// and a worker in this process picking a queued job up by itself.
import { randomUUID } from 'node:crypto';
import { eq, inArray } from 'drizzle-orm';
import { afterAll, describe, expect, it } from 'vitest';
import { requestPasswordReset } from '$lib/server/accounts';
import { db } from '$lib/server/db';
import { authSessions, oauthPending, passwordResetTokens, rateLimits } from '$lib/server/db/schema';
import { purgeExpired } from '$lib/server/jobs/purge-expired';
import { queueNames, startJobs, stopJobs } from '$lib/server/jobs/registry';
import { mailTo, signUpOwner } from './helpers';

afterAll(async () => {
	await stopJobs();
});

const HOUR = 3_600_000;

describe('the purge-expired job', () => {
	it('deletes what is over and keeps what is still running', async () => {
		const owner = await signUpOwner('purge');
		const now = Date.now();
		const tag = randomUUID().slice(0, 8);
		const past = new Date(now - HOUR);
		const future = new Date(now + HOUR);

		await db.insert(rateLimits).values([
			{ key: `test-${tag}-old`, points: 3, expire: now - 1000 },
			{ key: `test-${tag}-live`, points: 3, expire: now + HOUR },
			// rate-limiter-flexible writes NULL for a counter that never ends: not ours to drop.
			{ key: `test-${tag}-forever`, points: 1, expire: null }
		]);
		await db.insert(authSessions).values([
			{ id: `old-${tag}`, userId: owner.userId, expiresAt: past },
			{ id: `live-${tag}`, userId: owner.userId, expiresAt: future }
		]);
		await db.insert(passwordResetTokens).values([
			{ tokenHash: `old-${tag}`, userId: owner.userId, expiresAt: past },
			{ tokenHash: `used-${tag}`, userId: owner.userId, expiresAt: future, usedAt: new Date(now - 60_000) },
			{ tokenHash: `live-${tag}`, userId: owner.userId, expiresAt: future }
		]);
		const pending = { provider: 'oauth', providerUserId: tag, email: `${tag}@tests.cellsitter.test`, name: 'P' };
		await db.insert(oauthPending).values([
			{ ...pending, tokenHash: `old-${tag}`, expiresAt: past },
			{ ...pending, tokenHash: `live-${tag}`, expiresAt: future }
		]);

		const counts = await purgeExpired.handle({});
		// At least ours; other tests' rows in the same database may go too.
		expect(counts).toMatchObject({
			rateLimits: expect.any(Number),
			sessions: expect.any(Number),
			resetTokens: expect.any(Number),
			pendingOAuth: expect.any(Number)
		});
		const c = counts as Record<string, number>;
		expect(c.rateLimits).toBeGreaterThanOrEqual(1);
		expect(c.sessions).toBeGreaterThanOrEqual(1);
		expect(c.resetTokens).toBeGreaterThanOrEqual(2);
		expect(c.pendingOAuth).toBeGreaterThanOrEqual(1);

		const keys = (await db.select({ key: rateLimits.key }).from(rateLimits).where(inArray(rateLimits.key, [`test-${tag}-old`, `test-${tag}-live`, `test-${tag}-forever`]))).map((r) => r.key);
		expect(keys.sort()).toEqual([`test-${tag}-forever`, `test-${tag}-live`]);
		const sessions = (await db.select({ id: authSessions.id }).from(authSessions).where(eq(authSessions.userId, owner.userId))).map((r) => r.id);
		expect(sessions).toContain(`live-${tag}`);
		expect(sessions).not.toContain(`old-${tag}`);
		const tokens = (await db.select({ id: passwordResetTokens.tokenHash }).from(passwordResetTokens).where(eq(passwordResetTokens.userId, owner.userId))).map((r) => r.id);
		expect(tokens).toEqual([`live-${tag}`]);
		const held = (await db.select({ id: oauthPending.tokenHash }).from(oauthPending).where(eq(oauthPending.providerUserId, tag))).map((r) => r.id);
		expect(held).toEqual([`live-${tag}`]);
	});

	it('is scheduled to run every hour once the jobs start', async () => {
		const boss = await startJobs('send-only');
		const schedules = await boss.getSchedules();
		const purge = schedules.find((s) => s.name === 'purge-expired');
		expect(purge).toBeDefined();
		// Five cron fields; "M * * * *" fires once an hour at minute M.
		expect(purge!.cron).toMatch(/^([0-5]?\d) \* \* \* \*$/);
		// Every queue the code names exists, so send/work never meet an unknown queue.
		const queues = (await boss.getQueues()).map((q) => q.name);
		for (const name of queueNames) expect(queues).toContain(name);
	});
});

describe('a worker in this process', () => {
	it('picks a queued reset up by itself and sends the mail', async () => {
		await stopJobs();
		await startJobs('work');
		const owner = await signUpOwner('worked');
		const address = `198.51.100.9-${randomUUID().slice(0, 6)}`;
		expect(await requestPasswordReset(owner.email, address)).toEqual({ ok: true });
		const deadline = Date.now() + 15_000;
		let mails = await mailTo(owner.email);
		while (mails.length === 0 && Date.now() < deadline) {
			await new Promise((r) => setTimeout(r, 250));
			mails = await mailTo(owner.email);
		}
		expect(mails).toHaveLength(1);
		expect(mails[0].subject).toBe('Reset your Cellsitter password');
	});
});
