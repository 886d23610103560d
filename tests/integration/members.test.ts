import { and, eq } from 'drizzle-orm';
import { describe, expect, it } from 'vitest';
import { signUp } from '$lib/server/accounts';
import { findMember, type Member } from '$lib/server/auth/permissions';
import { db } from '$lib/server/db';
import { memberships, users } from '$lib/server/db/schema';
import { acceptInvitation, changeRole, findInvitation, inviteMember, removeMember } from '$lib/server/workshops';
import { linkIn, mailTo, signUpOwner, uniqueEmail } from './helpers';

const ORIGIN = 'http://127.0.0.1:3100';

async function memberOf(userId: string, slug: string): Promise<Member> {
	const [user] = await db.select().from(users).where(eq(users.id, userId));
	const member = await findMember({ id: user.id, email: user.email, name: user.name }, slug);
	if (!member) throw new Error('not a member');
	return member;
}

const tokenOf = (link: string) => link.split('/invite/')[1];

describe('invitations', () => {
	it('e-mails a link that joins the invitee with the invited role, once', async () => {
		const owner = await signUpOwner('inviter');
		const ownerMember = await memberOf(owner.userId, owner.workshopSlug);
		const email = uniqueEmail('tech');
		const invited = await inviteMember(ownerMember, { email, role: 'technician' }, ORIGIN);
		expect(invited).toMatchObject({ ok: true, mailed: true });

		const [mail] = await mailTo(email);
		const link = linkIn(mail, '/invite/');
		expect(link.startsWith(`${ORIGIN}/invite/`)).toBe(true);
		const token = tokenOf(link);
		expect(await findInvitation(token)).toMatchObject({ email, role: 'technician' });

		const joined = await signUp({ email, name: 'Tech', password: 'a long enough password', invitationToken: token });
		expect(joined).toMatchObject({ ok: true, workshopSlug: owner.workshopSlug });
		if (!joined.ok) return;
		const tech = await memberOf(joined.userId, owner.workshopSlug);
		expect(tech.role).toBe('technician');
		// The invitee joined that workshop only: no workshop of their own.
		expect(await db.$count(memberships, eq(memberships.userId, joined.userId))).toBe(1);

		// Used once: the link is spent.
		expect(await findInvitation(token)).toBeNull();
		expect(await acceptInvitation({ id: joined.userId, email }, token)).toEqual({ ok: false, reason: 'invalid' });
	});

	it('lets an existing user accept, and refuses another address or an expired link', async () => {
		const owner = await signUpOwner('inviter2');
		const ownerMember = await memberOf(owner.userId, owner.workshopSlug);
		const other = await signUpOwner('other');
		const stranger = await signUpOwner('stranger');

		const result = await inviteMember(ownerMember, { email: other.email, role: 'builder' }, ORIGIN);
		if (!result.ok) throw new Error('invite failed');
		const token = tokenOf(result.link);
		expect(await acceptInvitation({ id: stranger.userId, email: stranger.email }, token)).toEqual({
			ok: false,
			reason: 'wrong-email'
		});
		const later = new Date(Date.now() + 8 * 86_400_000);
		expect(await acceptInvitation({ id: other.userId, email: other.email }, token, later)).toEqual({
			ok: false,
			reason: 'invalid'
		});
		expect(await acceptInvitation({ id: other.userId, email: other.email }, token)).toEqual({
			ok: true,
			workshopSlug: owner.workshopSlug
		});
		expect((await memberOf(other.userId, owner.workshopSlug)).role).toBe('builder');
	});

	it('does not invite someone who is already a member', async () => {
		const owner = await signUpOwner('self');
		const ownerMember = await memberOf(owner.userId, owner.workshopSlug);
		expect(await inviteMember(ownerMember, { email: owner.email, role: 'viewer' }, ORIGIN)).toEqual({
			ok: false,
			reason: 'already-member'
		});
	});
});

describe('the last owner', () => {
	it('cannot be demoted or removed; with a second owner both work', async () => {
		const owner = await signUpOwner('last');
		const ownerMember = await memberOf(owner.userId, owner.workshopSlug);
		expect(await changeRole(ownerMember, owner.userId, 'builder')).toEqual({ ok: false, reason: 'last-owner' });
		expect(await removeMember(ownerMember, owner.userId)).toEqual({ ok: false, reason: 'last-owner' });

		const second = await signUpOwner('second');
		const inv = await inviteMember(ownerMember, { email: second.email, role: 'technician' }, ORIGIN);
		if (!inv.ok) throw new Error('invite failed');
		await acceptInvitation({ id: second.userId, email: second.email }, tokenOf(inv.link));
		expect(await changeRole(ownerMember, second.userId, 'owner')).toEqual({ ok: true });
		expect(await changeRole(ownerMember, owner.userId, 'builder')).toEqual({ ok: true });
		const secondMember = await memberOf(second.userId, owner.workshopSlug);
		// Now `second` is the only owner.
		expect(await removeMember(secondMember, second.userId)).toEqual({ ok: false, reason: 'last-owner' });
		expect(await removeMember(secondMember, owner.userId)).toEqual({ ok: true });
		const left = await db
			.select()
			.from(memberships)
			.where(and(eq(memberships.workshopId, ownerMember.workshop.id), eq(memberships.userId, owner.userId)));
		expect(left).toEqual([]);
	});

	it('refuses member management to a non-owner with 403', async () => {
		const owner = await signUpOwner('boss');
		const ownerMember = await memberOf(owner.userId, owner.workshopSlug);
		const tech = await signUpOwner('tech2');
		const inv = await inviteMember(ownerMember, { email: tech.email, role: 'technician' }, ORIGIN);
		if (!inv.ok) throw new Error('invite failed');
		await acceptInvitation({ id: tech.userId, email: tech.email }, tokenOf(inv.link));
		const techMember = await memberOf(tech.userId, owner.workshopSlug);
		await expect(changeRole(techMember, tech.userId, 'owner')).rejects.toMatchObject({ status: 403 });
		await expect(inviteMember(techMember, { email: uniqueEmail('x'), role: 'owner' }, ORIGIN)).rejects.toMatchObject({
			status: 403
		});
	});
});
