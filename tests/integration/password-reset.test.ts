import { describe, expect, it } from 'vitest';
import { isResetTokenUsable, requestPasswordReset, resetPassword, signInWithPassword } from '$lib/server/accounts';
import { createSession, validateSession } from '$lib/server/auth/session';
import { linkIn, mailTo, signUpOwner, uniqueEmail } from './helpers';

const ORIGIN = 'http://127.0.0.1:3100';
const here = () => `192.0.2.${Math.floor(Math.random() * 250) + 1}-${crypto.randomUUID().slice(0, 6)}`;

async function resetTokenFor(email: string, now?: Date) {
	await requestPasswordReset(email, ORIGIN, now);
	const [mail] = await mailTo(email);
	return linkIn(mail, '/reset/').split('/reset/')[1];
}

describe('password reset', () => {
	it('sets a new password once and signs the account out everywhere', async () => {
		const owner = await signUpOwner('reset');
		const session = await createSession(owner.userId);
		const token = await resetTokenFor(owner.email);
		expect(await isResetTokenUsable(token)).toBe(true);

		expect(await resetPassword(token, 'a brand new password')).toMatchObject({ ok: true, userId: owner.userId });
		expect((await validateSession(session.id)).session).toBeNull();
		expect(await signInWithPassword(owner.email, 'a brand new password', here())).toMatchObject({ ok: true });
		expect(await signInWithPassword(owner.email, owner.password, here())).toMatchObject({ ok: false });

		// Single use.
		expect(await isResetTokenUsable(token)).toBe(false);
		expect(await resetPassword(token, 'yet another password')).toEqual({ ok: false, reason: 'invalid' });
	});

	it('expires after an hour', async () => {
		const owner = await signUpOwner('late');
		const issued = new Date(Date.now() - 61 * 60_000);
		const token = await resetTokenFor(owner.email, issued);
		expect(await isResetTokenUsable(token)).toBe(false);
		expect(await resetPassword(token, 'too late password')).toEqual({ ok: false, reason: 'invalid' });
		expect(await signInWithPassword(owner.email, owner.password, here())).toMatchObject({ ok: true });
	});

	it('sends nothing for an unknown address', async () => {
		const email = uniqueEmail('nobody');
		await requestPasswordReset(email, ORIGIN);
		expect(await mailTo(email)).toEqual([]);
	});
});
