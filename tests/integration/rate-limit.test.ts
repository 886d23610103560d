import { describe, expect, it } from 'vitest';
import { signInWithPassword } from '$lib/server/accounts';
import { ADDRESS_FAILURES, PAIR_FAILURES, PAIR_WINDOW_SECONDS } from '$lib/server/auth/rate-limit';
import { signUpOwner, uniqueEmail } from './helpers';

// Addresses from the documentation ranges (RFC 5737), unique per run so reruns start clean.
const address = () => `198.51.100.${Math.floor(Math.random() * 250) + 1}-${crypto.randomUUID().slice(0, 6)}`;

describe('sign-in rate limit', () => {
	it('blocks an (account, address) pair after 5 failures, even with the right password', async () => {
		const owner = await signUpOwner('limited');
		const from = address();
		for (let i = 0; i < PAIR_FAILURES; i++) {
			expect(await signInWithPassword(owner.email, 'wrong password', from)).toEqual({ ok: false, reason: 'invalid' });
		}
		const blocked = await signInWithPassword(owner.email, owner.password, from);
		expect(blocked.ok).toBe(false);
		if (blocked.ok || blocked.reason !== 'rate-limited') throw new Error('expected rate-limited');
		expect(blocked.retryAfterSeconds).toBeGreaterThan(PAIR_WINDOW_SECONDS - 60);
		expect(blocked.retryAfterSeconds).toBeLessThanOrEqual(PAIR_WINDOW_SECONDS);

		// The owner at their own address is not locked out by failures from elsewhere.
		expect(await signInWithPassword(owner.email, owner.password, address())).toMatchObject({ ok: true });
	});

	it('four failures then a success clears the pair', async () => {
		const owner = await signUpOwner('clears');
		const from = address();
		for (let i = 0; i < PAIR_FAILURES - 1; i++) await signInWithPassword(owner.email, 'nope nope', from);
		expect(await signInWithPassword(owner.email, owner.password, from)).toMatchObject({ ok: true });
		for (let i = 0; i < PAIR_FAILURES - 1; i++) await signInWithPassword(owner.email, 'nope nope', from);
		expect(await signInWithPassword(owner.email, owner.password, from)).toMatchObject({ ok: true });
	});

	it('blocks an address that fails across many accounts', async () => {
		const from = address();
		for (let i = 0; i < ADDRESS_FAILURES; i++) {
			// Unknown accounts, a few tries each: never 5 on one pair.
			await signInWithPassword(uniqueEmail(`spray${i}`), 'guess', from);
		}
		const owner = await signUpOwner('victim');
		const blocked = await signInWithPassword(owner.email, owner.password, from);
		expect(blocked).toMatchObject({ ok: false, reason: 'rate-limited' });
		expect(await signInWithPassword(owner.email, owner.password, address())).toMatchObject({ ok: true });
	});
});
