import { and, eq } from 'drizzle-orm';
import { describe, expect, it } from 'vitest';
import { signUp } from '$lib/server/accounts';
import { findMember, type Member } from '$lib/server/auth/permissions';
import { db } from '$lib/server/db';
import { memberships, users } from '$lib/server/db/schema';
import { acceptInvitation, findInvitation, inviteMember } from '$lib/server/workshops-invitations';
import { changeRole, removeMember } from '$lib/server/workshops-members';
import { createPack, updatePack } from '$lib/server/packs';
import { load as membersLoad, actions as membersActions } from '../../src/routes/(app)/w/[workshop=slug]/workshop/members/+page.server';
import { packs } from '$lib/server/db/schema';
import { joinAs, linkIn, mailTo, packFixture, signUpOwner, uniqueEmail } from './helpers';

// global-setup.ts (or scripts/test.sh) sets it: invitation links must start here.
const ORIGIN = process.env.ORIGIN!;

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
		const invited = await inviteMember(ownerMember, { email, role: 'technician' });
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

		const result = await inviteMember(ownerMember, { email: other.email, role: 'builder' });
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
		expect(await inviteMember(ownerMember, { email: owner.email, role: 'viewer' })).toEqual({
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
		const inv = await inviteMember(ownerMember, { email: second.email, role: 'technician' });
		if (!inv.ok) throw new Error('invite failed');
		await acceptInvitation({ id: second.userId, email: second.email }, tokenOf(inv.link));
		expect(await changeRole(ownerMember, second.userId, 'owner')).toEqual({ ok: true });
		expect(await changeRole(ownerMember, owner.userId, 'builder')).toEqual({ ok: true });
		const secondMember = await memberOf(second.userId, owner.workshopSlug);
		// Now `second` is the only owner.
		expect(await removeMember(secondMember, second.userId)).toEqual({ ok: false, reason: 'last-owner' });
		expect(await removeMember(secondMember, owner.userId)).toMatchObject({ ok: true, clearedPacks: [] });
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
		const inv = await inviteMember(ownerMember, { email: tech.email, role: 'technician' });
		if (!inv.ok) throw new Error('invite failed');
		await acceptInvitation({ id: tech.userId, email: tech.email }, tokenOf(inv.link));
		const techMember = await memberOf(tech.userId, owner.workshopSlug);
		await expect(changeRole(techMember, tech.userId, 'owner')).rejects.toMatchObject({ status: 403 });
		await expect(inviteMember(techMember, { email: uniqueEmail('x'), role: 'owner' })).rejects.toMatchObject({
			status: 403
		});
	});
});

type MembersEvent = Parameters<typeof membersLoad>[0];

/** A request to the members page of `who`'s workshop, as the route handlers get it. */
function membersEvent(who: Member, form?: Record<string, string>): MembersEvent {
	const url = new URL(`http://127.0.0.1:3100/w/${who.workshop.slug}/workshop/members`);
	return {
		locals: { user: who.user, session: null },
		params: { workshop: who.workshop.slug },
		url,
		request: new Request(url, form ? { method: 'POST', body: new URLSearchParams(form) } : undefined)
	} as unknown as MembersEvent;
}

describe('removing a member', () => {
	it('clears them as pack owner in the same step, and says which packs', async () => {
		const { owner, pack } = await packFixture({ series: 4, parallel: 2 });
		const viewer = await joinAs(owner, 'viewer');
		expect(await updatePack(owner, pack.id, { name: 'Cargo trike pack', packOwnerId: viewer.user.id })).toMatchObject({ ok: true });

		const removed = (await membersActions.remove(membersEvent(owner, { userId: viewer.user.id }))) as { memberDone?: string };
		expect(removed.memberDone).toBe(
			`${viewer.user.name} is no longer a member. They were the pack owner of Cargo trike pack; that pack now has no pack owner.`
		);
		const [row] = await db.select({ packOwnerId: packs.packOwnerId, updatedBy: packs.updatedBy }).from(packs).where(eq(packs.id, pack.id));
		expect(row).toEqual({ packOwnerId: null, updatedBy: owner.user.id });
		const still = await db.$count(memberships, and(eq(memberships.workshopId, owner.workshop.id), eq(memberships.userId, viewer.user.id)));
		expect(still).toBe(0);
	});

	it('leaves packs alone when the removal is refused', async () => {
		const { owner, pack } = await packFixture({ series: 2, parallel: 1 });
		await updatePack(owner, pack.id, { packOwnerId: owner.user.id });
		expect(await removeMember(owner, owner.user.id)).toEqual({ ok: false, reason: 'last-owner' });
		const [row] = await db.select({ packOwnerId: packs.packOwnerId }).from(packs).where(eq(packs.id, pack.id));
		expect(row.packOwnerId).toBe(owner.user.id);
	});

	it('names every pack when they owned several, and only packs of this workshop', async () => {
		const { owner, pack, spec } = await packFixture({ series: 2, parallel: 1 });
		const viewer = await joinAs(owner, 'viewer');
		await updatePack(owner, pack.id, { name: 'Bike pack', packOwnerId: viewer.user.id });
		const second = await createPack(owner, {
			name: 'Solar bank',
			cellSpecId: spec.id,
			series: 4,
			parallel: 1,
			bmsFitted: false,
			bmsBalanceAmps: null,
			status: 'planning',
			packOwnerId: viewer.user.id,
			measuredPeakAmps: null,
			measuredPeakNote: '',
			notes: ''
		});
		if (!second.ok) throw new Error(second.message);
		// The same person is also pack owner in another workshop: that pack stays theirs.
		const elsewhere = await packFixture({ series: 2, parallel: 1 });
		const inv = await inviteMember(elsewhere.owner, { email: viewer.user.email, role: 'viewer' });
		if (!inv.ok) throw new Error('invite failed');
		expect(await acceptInvitation(viewer.user, tokenOf(inv.link))).toMatchObject({ ok: true });
		await updatePack(elsewhere.owner, elsewhere.pack.id, { packOwnerId: viewer.user.id });

		const removed = (await membersActions.remove(membersEvent(owner, { userId: viewer.user.id }))) as { memberDone?: string };
		expect(removed.memberDone).toBe(
			`${viewer.user.name} is no longer a member. They were the pack owner of Bike pack and Solar bank; those packs now have no pack owner.`
		);
		const [kept] = await db.select({ packOwnerId: packs.packOwnerId }).from(packs).where(eq(packs.id, elsewhere.pack.id));
		expect(kept.packOwnerId).toBe(viewer.user.id);
	});
});

describe('the members page', () => {
	it("shows when an invitation ends in the workshop's time zone", async () => {
		const owner = await signUpOwner('zone');
		const ownerMember = await memberOf(owner.userId, owner.workshopSlug);
		// Sent so that it ends at 2027-07-01 12:00 UTC (7 days later).
		const sent = new Date(Date.UTC(2027, 5, 24, 12, 0));
		const email = uniqueEmail('zoned');
		expect(await inviteMember(ownerMember, { email, role: 'viewer' }, sent)).toMatchObject({ ok: true });

		const data = (await membersLoad(membersEvent(ownerMember))) as { invitations: { email: string; expires: string }[] };
		const shown = data.invitations.find((i) => i.email === email);
		// signUpOwner's workshop is in Europe/Berlin: CEST, UTC+2 in July (EU summer time, Directive 2000/84/EC).
		expect(shown?.expires).toBe('1 Jul 2027, 14:00');
	});
});
