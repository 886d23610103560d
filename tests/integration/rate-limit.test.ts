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

	it('blocks an address that fails across many accounts; its successful sign-ins do not count', async () => {
		const from = address();
		// Unknown accounts, one try each: never 5 on one pair.
		await Promise.all(
			Array.from({ length: ADDRESS_FAILURES - 1 }, (_, i) => signInWithPassword(uniqueEmail(`spray${i}`), 'guess', from))
		);
		const owner = await signUpOwner('victim');
		expect(await signInWithPassword(owner.email, owner.password, from)).toMatchObject({ ok: true });
		expect(await signInWithPassword(owner.email, owner.password, from)).toMatchObject({ ok: true });
		// The 50th failure is still checked; after it the address waits, even with a right password.
		expect(await signInWithPassword(uniqueEmail('last'), 'guess', from)).toEqual({ ok: false, reason: 'invalid' });
		expect(await signInWithPassword(owner.email, owner.password, from)).toMatchObject({ ok: false, reason: 'rate-limited' });
		expect(await signInWithPassword(owner.email, owner.password, address())).toMatchObject({ ok: true });
	});

	it('20 parallel wrong guesses for one account and address get at most 5 password checks', async () => {
		const owner = await signUpOwner('parallel');
		const from = address();
		const outcomes = await Promise.all(
			Array.from({ length: 20 }, () => signInWithPassword(owner.email, 'wrong password', from))
		);
		// 'invalid' is an answer after a password check; 'rate-limited' is refused before one.
		const checked = outcomes.filter((o) => !o.ok && o.reason === 'invalid').length;
		const refused = outcomes.filter((o) => !o.ok && o.reason === 'rate-limited').length;
		expect(checked).toBe(PAIR_FAILURES);
		expect(refused).toBe(20 - PAIR_FAILURES);
		// The right password now waits too; from another address it still gets in.
		expect(await signInWithPassword(owner.email, owner.password, from)).toMatchObject({ ok: false, reason: 'rate-limited' });
		expect(await signInWithPassword(owner.email, owner.password, address())).toMatchObject({ ok: true });
	});

	it('the right password after parallel failures gets in and clears the pair', async () => {
		const owner = await signUpOwner('parallel-clears');
		const from = address();
		const wrong = () => signInWithPassword(owner.email, 'wrong password', from);
		const first = await Promise.all(Array.from({ length: PAIR_FAILURES - 1 }, wrong));
		expect(first.every((o) => !o.ok && o.reason === 'invalid')).toBe(true);
		expect(await signInWithPassword(owner.email, owner.password, from)).toMatchObject({ ok: true });
		// Cleared: a full 5 checks are open again, and no more.
		const again = await Promise.all(Array.from({ length: PAIR_FAILURES + 2 }, wrong));
		expect(again.filter((o) => !o.ok && o.reason === 'invalid')).toHaveLength(PAIR_FAILURES);
		expect(again.filter((o) => !o.ok && o.reason === 'rate-limited')).toHaveLength(2);
	});
});
