/**
 * The only module that imports lucia (stack.md pitfall 14): sessions in PostgreSQL, an httpOnly
 * SameSite=Lax cookie, sliding expiry (lucia extends a session used in the second half of its life).
 */
import { DrizzlePostgreSQLAdapter } from '@lucia-auth/adapter-drizzle';
import type { Cookies } from '@sveltejs/kit';
import { Lucia, TimeSpan } from 'lucia';
import { db } from '../db';
import { authSessions, users } from '../db/schema';

const adapter = new DrizzlePostgreSQLAdapter(db, authSessions, users);

export const SESSION_DAYS = 30;

const lucia = new Lucia(adapter, {
	sessionExpiresIn: new TimeSpan(SESSION_DAYS, 'd'),
	sessionCookie: { name: 'cellsitter_session', attributes: { sameSite: 'lax' } },
	getUserAttributes: (attributes) => ({ email: attributes.email, name: attributes.name })
});

declare module 'lucia' {
	interface Register {
		Lucia: typeof lucia;
		DatabaseUserAttributes: { email: string; name: string };
	}
}

export type SessionUser = { id: string; email: string; name: string };
export type AuthSession = { id: string; userId: string; expiresAt: Date; fresh: boolean };

export const sessionCookieName = lucia.sessionCookieName;

export async function createSession(userId: string): Promise<AuthSession> {
	return lucia.createSession(userId, {});
}

/** The session and its user, or nulls; a session used late in its life comes back extended (`fresh`). */
export async function validateSession(
	sessionId: string
): Promise<{ session: AuthSession | null; user: SessionUser | null }> {
	return lucia.validateSession(sessionId);
}

export async function invalidateSession(sessionId: string): Promise<void> {
	await lucia.invalidateSession(sessionId);
}

export async function invalidateUserSessions(userId: string): Promise<void> {
	await lucia.invalidateUserSessions(userId);
}

/** Cookies are Secure everywhere except plain-HTTP loopback (local use and tests). */
export function isSecureContext(url: URL): boolean {
	return !isLoopback(url);
}

function isLoopback(url: URL): boolean {
	return ['localhost', '[::1]'].includes(url.hostname) || /^127\.\d{1,3}\.\d{1,3}\.\d{1,3}$/.test(url.hostname);
}

/** Sets the session cookie; Secure everywhere except plain-HTTP loopback. */
export function setSessionCookie(cookies: Cookies, session: AuthSession, url: URL): void {
	const cookie = lucia.createSessionCookie(session.id);
	cookies.set(cookie.name, cookie.value, {
		...cookie.attributes,
		path: '/',
		httpOnly: true,
		sameSite: 'lax',
		secure: !isLoopback(url)
	});
}

export function clearSessionCookie(cookies: Cookies, url: URL): void {
	const cookie = lucia.createBlankSessionCookie();
	cookies.set(cookie.name, cookie.value, {
		...cookie.attributes,
		path: '/',
		httpOnly: true,
		sameSite: 'lax',
		secure: !isLoopback(url)
	});
}
