/** Accounts: sign-up, sign-in with a password, password reset, OAuth identities. */
import { and, eq, gt, isNull } from 'drizzle-orm';
import { db } from './db';
import { isUniqueViolation } from './db/errors';
import { oauthAccounts, oauthPending, passwordResetTokens, users, type Workshop } from './db/schema';
import { hashToken, newId, newToken } from './ids';
import { mailServerReady } from './mail';
import { publicOrigin } from './env';
import { enqueue } from './jobs/boss';
import { consumeResetRequest } from './auth/reset-rate-limit';
import { burnPasswordCheck, hashPassword, verifyPassword } from './auth/passwords';
import { invalidateUserSessions } from './auth/session';
import { signInSucceeded, takeSignInAttempt } from './auth/rate-limit';
import { createWorkshopIn } from './workshops';
import { acceptInvitationIn } from './workshops-invitations';

export const RESET_MINUTES = 60;

export type SignUpInput = {
	email: string;
	name: string;
	password: string | null;
	/** The user's own workshop (ignored when joining through an invitation). */
	workshop?: { name: string; timeZone: string };
	invitationToken?: string;
};

export type SignUpResult =
	| { ok: true; userId: string; workshopSlug: string }
	| { ok: false; reason: 'email-taken' | 'invitation-invalid' | 'invitation-wrong-email' | 'workshop-missing' };

export async function findUserByEmail(email: string) {
	const [user] = await db.select().from(users).where(eq(users.email, email.trim().toLowerCase()));
	return user ?? null;
}

/**
 * Creates the user and either their own workshop (as owner) or their membership through an
 * invitation — all in one transaction, so a failed step leaves nothing behind.
 */
export async function signUp(input: SignUpInput, oauth?: { provider: string; providerUserId: string }): Promise<SignUpResult> {
	const email = input.email.trim().toLowerCase();
	if (await findUserByEmail(email)) return { ok: false, reason: 'email-taken' };
	if (!input.invitationToken && !input.workshop) return { ok: false, reason: 'workshop-missing' };
	const passwordHash = input.password ? await hashPassword(input.password) : null;
	const userId = newId();

	try {
		return await db.transaction(async (tx) => {
			await tx.insert(users).values({ id: userId, email, name: input.name.trim(), passwordHash });
			if (oauth) await tx.insert(oauthAccounts).values({ ...oauth, userId, email });
			if (input.invitationToken) {
				const accepted = await acceptInvitationIn(tx, { id: userId, email }, input.invitationToken);
				if (!accepted.ok) throw new SignUpRefused(accepted.reason === 'wrong-email' ? 'invitation-wrong-email' : 'invitation-invalid');
				return { ok: true as const, userId, workshopSlug: accepted.workshopSlug };
			}
			const workshop: Workshop = await createWorkshopIn(tx, userId, input.workshop!);
			return { ok: true as const, userId, workshopSlug: workshop.slug };
		});
	} catch (e) {
		if (e instanceof SignUpRefused) return { ok: false, reason: e.reason };
		if (isUniqueViolation(e, 'users_email_key')) return { ok: false, reason: 'email-taken' };
		throw e;
	}
}

class SignUpRefused extends Error {
	constructor(readonly reason: 'invitation-invalid' | 'invitation-wrong-email') {
		super(reason);
	}
}


export type SignInResult =
	| { ok: true; userId: string }
	| { ok: false; reason: 'invalid' }
	| { ok: false; reason: 'rate-limited'; retryAfterSeconds: number };

/**
 * Checks a password. The attempt is counted per (account, address) and per address before the
 * check (so parallel guesses cannot slip past the limit) and refunded when the password is right.
 */
export async function signInWithPassword(email: string, password: string, address: string): Promise<SignInResult> {
	const normalised = email.trim().toLowerCase();
	const attempt = await takeSignInAttempt(normalised, address);
	if (!attempt.allowed) return { ok: false, reason: 'rate-limited', retryAfterSeconds: attempt.retryAfterSeconds };

	const user = await findUserByEmail(normalised);
	const valid = user?.passwordHash
		? await verifyPassword(user.passwordHash, password)
		: (await burnPasswordCheck(password), false);
	if (!user || !valid) return { ok: false, reason: 'invalid' };
	await signInSucceeded(normalised, address);
	return { ok: true, userId: user.id };
}

export type ResetRequestResult =
	| { ok: true }
	| { ok: false; reason: 'mail-unavailable' }
	| { ok: false; reason: 'rate-limited'; retryAfterSeconds: number };

/**
 * Takes a reset request: checks that mail can go out, counts it per e-mail and per client
 * address, and queues the mail job (jobs/password-reset-mail.ts), which looks the account up.
 * Known and unknown addresses take exactly this same path, so the answer and its time tell
 * nothing about who has an account.
 */
export async function requestPasswordReset(email: string, address: string, now = new Date()): Promise<ResetRequestResult> {
	const normalised = email.trim().toLowerCase();
	if (!(await mailServerReady())) return { ok: false, reason: 'mail-unavailable' };
	const wait = await consumeResetRequest(normalised, address);
	if (wait > 0) return { ok: false, reason: 'rate-limited', retryAfterSeconds: wait };
	await enqueue('password-reset-mail', { email: normalised, origin: publicOrigin(), requestedAt: now.toISOString() });
	return { ok: true };
}

/** True while the reset link is unused and unexpired. */
export async function isResetTokenUsable(token: string, now = new Date()): Promise<boolean> {
	const [row] = await db
		.select({ userId: passwordResetTokens.userId })
		.from(passwordResetTokens)
		.where(
			and(
				eq(passwordResetTokens.tokenHash, hashToken(token)),
				isNull(passwordResetTokens.usedAt),
				gt(passwordResetTokens.expiresAt, now)
			)
		);
	return Boolean(row);
}

/** Sets a new password through a reset link (once), and signs the account out everywhere. */
export async function resetPassword(
	token: string,
	password: string,
	now = new Date()
): Promise<{ ok: true; userId: string } | { ok: false; reason: 'invalid' }> {
	const passwordHash = await hashPassword(password);
	const userId = await db.transaction(async (tx) => {
		const [claimed] = await tx
			.update(passwordResetTokens)
			.set({ usedAt: now })
			.where(
				and(
					eq(passwordResetTokens.tokenHash, hashToken(token)),
					isNull(passwordResetTokens.usedAt),
					gt(passwordResetTokens.expiresAt, now)
				)
			)
			.returning({ userId: passwordResetTokens.userId });
		if (!claimed) return null;
		await tx.update(users).set({ passwordHash }).where(eq(users.id, claimed.userId));
		return claimed.userId;
	});
	if (!userId) return { ok: false, reason: 'invalid' };
	await invalidateUserSessions(userId);
	return { ok: true, userId };
}

/** The user behind a provider identity, if it is linked. */
export async function findOAuthUser(provider: string, providerUserId: string) {
	const [row] = await db
		.select({ userId: oauthAccounts.userId })
		.from(oauthAccounts)
		.where(and(eq(oauthAccounts.provider, provider), eq(oauthAccounts.providerUserId, providerUserId)));
	return row?.userId ?? null;
}

export type LinkResult = { ok: true } | { ok: false; reason: 'linked-elsewhere' | 'provider-already-linked' };

/** Links a provider identity to the signed-in user (never by e-mail alone). */
export async function linkOAuthAccount(
	userId: string,
	identity: { provider: string; providerUserId: string; email: string | null }
): Promise<LinkResult> {
	const owner = await findOAuthUser(identity.provider, identity.providerUserId);
	if (owner === userId) return { ok: true };
	if (owner) return { ok: false, reason: 'linked-elsewhere' };
	const inserted = await db
		.insert(oauthAccounts)
		.values({ ...identity, userId })
		.onConflictDoNothing()
		.returning({ userId: oauthAccounts.userId });
	return inserted.length ? { ok: true } : { ok: false, reason: 'provider-already-linked' };
}

export async function listOAuthAccounts(userId: string) {
	return db
		.select({ provider: oauthAccounts.provider, email: oauthAccounts.email, createdAt: oauthAccounts.createdAt })
		.from(oauthAccounts)
		.where(eq(oauthAccounts.userId, userId));
}

export async function unlinkOAuthAccount(userId: string, provider: string) {
	const [user] = await db.select({ passwordHash: users.passwordHash }).from(users).where(eq(users.id, userId));
	const linked = await listOAuthAccounts(userId);
	// Keep at least one way in.
	if (!user?.passwordHash && linked.length <= 1) return { ok: false as const, reason: 'last-sign-in' as const };
	await db.delete(oauthAccounts).where(and(eq(oauthAccounts.userId, userId), eq(oauthAccounts.provider, provider)));
	return { ok: true as const };
}

export const PENDING_OAUTH_MINUTES = 15;

export type PendingOAuth = { provider: string; providerUserId: string; email: string; name: string };

/** Keeps a first-time provider identity for a few minutes while its owner picks a workshop. */
export async function holdPendingOAuth(identity: PendingOAuth, now = new Date()): Promise<string> {
	const token = newToken();
	await db.insert(oauthPending).values({
		...identity,
		tokenHash: hashToken(token),
		expiresAt: new Date(now.getTime() + PENDING_OAUTH_MINUTES * 60_000)
	});
	return token;
}

export async function findPendingOAuth(token: string, now = new Date()): Promise<PendingOAuth | null> {
	const [row] = await db
		.select({
			provider: oauthPending.provider,
			providerUserId: oauthPending.providerUserId,
			email: oauthPending.email,
			name: oauthPending.name
		})
		.from(oauthPending)
		.where(and(eq(oauthPending.tokenHash, hashToken(token)), gt(oauthPending.expiresAt, now)));
	return row ?? null;
}

/** Finishes a first OAuth sign-in: a new user with the provider linked, no password. */
export async function completeOAuthSignUp(
	token: string,
	input: { name: string; workshop?: { name: string; timeZone: string }; invitationToken?: string }
): Promise<SignUpResult | { ok: false; reason: 'pending-expired' }> {
	const pending = await findPendingOAuth(token);
	if (!pending) return { ok: false, reason: 'pending-expired' };
	const result = await signUp(
		{ email: pending.email, name: input.name, password: null, workshop: input.workshop, invitationToken: input.invitationToken },
		{ provider: pending.provider, providerUserId: pending.providerUserId }
	);
	if (result.ok) await db.delete(oauthPending).where(eq(oauthPending.tokenHash, hashToken(token)));
	return result;
}
