/**
 * The slow half of a password reset, off the request path: look the address up, make the
 * single-use token and send the link. The request (accounts.ts requestPasswordReset) does the
 * same work for every address, so neither its answer nor its time tells whether one has an account.
 */
import { eq } from 'drizzle-orm';
import { findUserByEmail, RESET_MINUTES } from '../accounts';
import { db } from '../db';
import { passwordResetTokens } from '../db/schema';
import { hashToken, newToken } from '../ids';
import { escapeHtml, sendMail } from '../mail';
import { defineJob } from './define';

export type PasswordResetMail = {
	email: string;
	/** The configured public origin (publicOrigin()), never the request's Host. */
	origin: string;
	/** When the person asked (ISO); the link's hour counts from here. */
	requestedAt: string;
};

export async function sendPasswordResetMail(data: PasswordResetMail): Promise<'sent' | 'no-account'> {
	const user = await findUserByEmail(data.email);
	if (!user) return 'no-account';
	const token = newToken();
	const tokenHash = hashToken(token);
	await db.insert(passwordResetTokens).values({
		tokenHash,
		userId: user.id,
		expiresAt: new Date(new Date(data.requestedAt).getTime() + RESET_MINUTES * 60_000)
	});
	const link = `${data.origin}/reset/${token}`;
	try {
		await sendMail({
			to: user.email,
			subject: 'Reset your Cellsitter password',
			text:
				`Someone asked to reset the password of your Cellsitter account.\n\n` +
				`Open this link within ${RESET_MINUTES} minutes to choose a new one (it works once):\n${link}\n\n` +
				`If it was not you, ignore this message: your password stays as it is.`,
			html:
				`<p>Someone asked to reset the password of your Cellsitter account.</p>` +
				`<p><a href="${escapeHtml(link)}">Choose a new password</a> within ${RESET_MINUTES} minutes (the link works once).</p>` +
				`<p>If it was not you, ignore this message: your password stays as it is.</p>` +
				`<p style="color:#6b655d">${escapeHtml(user.email)}</p>`
		});
	} catch (e) {
		// The retry makes a token of its own; this one was never delivered.
		await db.delete(passwordResetTokens).where(eq(passwordResetTokens.tokenHash, tokenHash));
		throw e;
	}
	return 'sent';
}

export const passwordResetMail = defineJob<PasswordResetMail>({
	// A mail server that is briefly away gets three more tries, 30 s apart and doubling (about
	// 3.5 minutes in all); longer, and the person has likely asked again. A try that hangs is
	// given up after 60 s (the SMTP socket itself times out after 15 s, mail.ts).
	options: { retryLimit: 3, retryDelay: 30, retryBackoff: true, expireInSeconds: 60 },
	handle: sendPasswordResetMail
});
