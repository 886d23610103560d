import { eq } from 'drizzle-orm';
import { describe, expect, it } from 'vitest';
import { signUp } from '$lib/server/accounts';
import { db } from '$lib/server/db';
import { memberships, users, workshops } from '$lib/server/db/schema';
import { uniqueEmail } from './helpers';

describe('sign-up', () => {
	it('creates the user, their workshop and an owner membership together', async () => {
		const email = uniqueEmail('signup');
		const result = await signUp({
			email: email.toUpperCase(),
			name: 'Ada Cell',
			password: 'a long enough password',
			workshop: { name: 'Ada’s Garage Bench', timeZone: 'America/Chicago' }
		});
		expect(result.ok).toBe(true);
		if (!result.ok) return;

		const [user] = await db.select().from(users).where(eq(users.id, result.userId));
		expect(user.email).toBe(email);
		expect(user.passwordHash).toMatch(/^\$argon2id\$/);
		const rows = await db
			.select({ role: memberships.role, slug: workshops.slug, tz: workshops.timeZone })
			.from(memberships)
			.innerJoin(workshops, eq(workshops.id, memberships.workshopId))
			.where(eq(memberships.userId, result.userId));
		expect(rows).toEqual([{ role: 'owner', slug: result.workshopSlug, tz: 'America/Chicago' }]);
		expect(result.workshopSlug).toMatch(/^ada-s-garage-bench(-\d+)?$/);
	});

	it('writes nothing when a later step fails', async () => {
		const email = uniqueEmail('halfway');
		const before = await db.$count(workshops);
		// 81 characters: the workshops table's check constraint refuses it after the user row is written.
		await expect(
			signUp({
				email,
				name: 'Half Way',
				password: 'a long enough password',
				workshop: { name: 'x'.repeat(81), timeZone: 'UTC' }
			})
		).rejects.toThrow();
		expect(await db.$count(users, eq(users.email, email))).toBe(0);
		expect(await db.$count(workshops)).toBe(before);
	});

	it('refuses a second account with the same e-mail', async () => {
		const email = uniqueEmail('twice');
		const input = { email, name: 'Twice', password: 'a long enough password', workshop: { name: 'One', timeZone: 'UTC' } };
		expect((await signUp(input)).ok).toBe(true);
		expect(await signUp({ ...input, email: email.toUpperCase() })).toEqual({ ok: false, reason: 'email-taken' });
		expect(await db.$count(users, eq(users.email, email))).toBe(1);
	});

	it('gives two workshops of the same name different slugs', async () => {
		const name = `Same Name ${Date.now()}`;
		const a = await signUp({ email: uniqueEmail('a'), name: 'A', password: 'a long enough password', workshop: { name, timeZone: 'UTC' } });
		const b = await signUp({ email: uniqueEmail('b'), name: 'B', password: 'a long enough password', workshop: { name, timeZone: 'UTC' } });
		expect(a.ok && b.ok).toBe(true);
		if (a.ok && b.ok) expect(a.workshopSlug).not.toBe(b.workshopSlug);
	});
});
