import { eq } from 'drizzle-orm';
import { describe, expect, it } from 'vitest';
import { db } from '$lib/server/db';
import { authSessions } from '$lib/server/db/schema';
import {
	SESSION_DAYS,
	createSession,
	invalidateSession,
	invalidateUserSessions,
	validateSession
} from '$lib/server/auth/session';
import { signUpOwner } from './helpers';

const DAY = 86_400_000;

describe('sessions', () => {
	it('validates a new session and returns its user', async () => {
		const owner = await signUpOwner('sess');
		const session = await createSession(owner.userId);
		const { session: valid, user } = await validateSession(session.id);
		expect(valid?.userId).toBe(owner.userId);
		expect(user?.email).toBe(owner.email);
		expect(valid?.fresh).toBe(false);
	});

	it('refuses an unknown or expired session', async () => {
		const owner = await signUpOwner('expired');
		const session = await createSession(owner.userId);
		await db.update(authSessions).set({ expiresAt: new Date(Date.now() - 1000) }).where(eq(authSessions.id, session.id));
		expect((await validateSession(session.id)).session).toBeNull();
		expect((await validateSession('no-such-session')).session).toBeNull();
	});

	it('extends a session used in the second half of its life (sliding expiry)', async () => {
		const owner = await signUpOwner('slide');
		const session = await createSession(owner.userId);
		await db
			.update(authSessions)
			.set({ expiresAt: new Date(Date.now() + 5 * DAY) })
			.where(eq(authSessions.id, session.id));
		const { session: slid } = await validateSession(session.id);
		expect(slid?.fresh).toBe(true);
		const [row] = await db.select().from(authSessions).where(eq(authSessions.id, session.id));
		const daysLeft = (row.expiresAt.getTime() - Date.now()) / DAY;
		expect(daysLeft).toBeGreaterThan(SESSION_DAYS - 1);
	});

	it('signs out one session, or all of a user', async () => {
		const owner = await signUpOwner('out');
		const a = await createSession(owner.userId);
		const b = await createSession(owner.userId);
		await invalidateSession(a.id);
		expect((await validateSession(a.id)).session).toBeNull();
		expect((await validateSession(b.id)).session).not.toBeNull();
		await invalidateUserSessions(owner.userId);
		expect((await validateSession(b.id)).session).toBeNull();
	});
});
