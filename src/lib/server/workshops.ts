/** Workshops, members and invitations: who belongs where, with which role. */
import { and, asc, eq, gt, isNull, like, or, sql } from 'drizzle-orm';
import type { Role } from '$lib/permissions';
import { requirePermission, type Member } from './auth/permissions';
import { db, type Tx } from './db';
import { invitations, memberships, users, workshops, type Workshop } from './db/schema';
import { hashToken, newId, newToken } from './ids';
import { canSendMail, escapeHtml, sendMail } from './mail';

export const INVITATION_DAYS = 7;

export type WorkshopSummary = Pick<Workshop, 'id' | 'name' | 'slug' | 'timeZone'> & { role: Role };

/** Every workshop the user belongs to, by name. */
export async function listWorkshopsOf(userId: string): Promise<WorkshopSummary[]> {
	return db
		.select({
			id: workshops.id,
			name: workshops.name,
			slug: workshops.slug,
			timeZone: workshops.timeZone,
			role: memberships.role
		})
		.from(memberships)
		.innerJoin(workshops, eq(workshops.id, memberships.workshopId))
		.where(eq(memberships.userId, userId))
		.orderBy(asc(workshops.name));
}

export function slugify(name: string): string {
	const base = name
		.normalize('NFKD')
		.replace(/[\u0300-\u036f]/g, '')
		.toLowerCase()
		.replace(/[^a-z0-9]+/g, '-')
		.replace(/^-+|-+$/g, '')
		.slice(0, 40)
		.replace(/-+$/g, '');
	return base || 'workshop';
}

async function freeSlug(tx: Tx, name: string): Promise<string> {
	const base = slugify(name);
	const taken = new Set(
		(
			await tx
				.select({ slug: workshops.slug })
				.from(workshops)
				.where(or(eq(workshops.slug, base), like(workshops.slug, `${base}-%`)))
		).map((r) => r.slug)
	);
	if (!taken.has(base)) return base;
	for (let n = 2; ; n++) if (!taken.has(`${base}-${n}`)) return `${base}-${n}`;
}

/** Creates a workshop with the user as its owner, inside the caller's transaction. */
export async function createWorkshopIn(
	tx: Tx,
	userId: string,
	input: { name: string; timeZone: string }
): Promise<Workshop> {
	// Serialise slug choice so two sign-ups with the same name cannot collide.
	await tx.execute(sql`select pg_advisory_xact_lock(hashtext('workshop-slug'))`);
	const [workshop] = await tx
		.insert(workshops)
		.values({ id: newId(), name: input.name.trim(), slug: await freeSlug(tx, input.name), timeZone: input.timeZone })
		.returning();
	await tx.insert(memberships).values({ workshopId: workshop.id, userId, role: 'owner' });
	return workshop;
}

export async function createWorkshop(userId: string, input: { name: string; timeZone: string }) {
	return db.transaction((tx) => createWorkshopIn(tx, userId, input));
}

export async function updateWorkshop(member: Member, input: { name: string; timeZone: string }) {
	requirePermission(member, 'workshop.edit');
	await db
		.update(workshops)
		.set({ name: input.name.trim(), timeZone: input.timeZone })
		.where(eq(workshops.id, member.workshop.id));
}

export type MemberRow = { userId: string; name: string; email: string; role: Role; since: Date };

export async function listMembers(member: Member): Promise<MemberRow[]> {
	requirePermission(member, 'members.view');
	return db
		.select({
			userId: users.id,
			name: users.name,
			email: users.email,
			role: memberships.role,
			since: memberships.createdAt
		})
		.from(memberships)
		.innerJoin(users, eq(users.id, memberships.userId))
		.where(eq(memberships.workshopId, member.workshop.id))
		.orderBy(asc(users.name));
}

export async function listOpenInvitations(member: Member, now = new Date()) {
	requirePermission(member, 'members.manage');
	return db
		.select({
			id: invitations.id,
			email: invitations.email,
			role: invitations.role,
			expiresAt: invitations.expiresAt
		})
		.from(invitations)
		.where(
			and(
				eq(invitations.workshopId, member.workshop.id),
				isNull(invitations.acceptedAt),
				gt(invitations.expiresAt, now)
			)
		)
		.orderBy(asc(invitations.email));
}

export type InviteResult =
	| { ok: true; link: string; mailed: boolean }
	| { ok: false; reason: 'already-member' };

/** Records an invitation and e-mails its link; the link is returned when no mail could be sent. */
export async function inviteMember(
	member: Member,
	input: { email: string; role: Role },
	origin: string,
	now = new Date()
): Promise<InviteResult> {
	requirePermission(member, 'members.manage');
	const email = input.email.trim().toLowerCase();
	const [existing] = await db
		.select({ userId: users.id })
		.from(memberships)
		.innerJoin(users, eq(users.id, memberships.userId))
		.where(and(eq(memberships.workshopId, member.workshop.id), eq(users.email, email)));
	if (existing) return { ok: false, reason: 'already-member' };

	const token = newToken();
	await db.insert(invitations).values({
		id: newId(),
		workshopId: member.workshop.id,
		email,
		role: input.role,
		tokenHash: hashToken(token),
		invitedBy: member.user.id,
		expiresAt: new Date(now.getTime() + INVITATION_DAYS * 86_400_000)
	});
	const link = `${origin}/invite/${token}`;
	if (!canSendMail()) return { ok: true, link, mailed: false };
	try {
		await sendMail({
			to: email,
			subject: `${member.user.name} invited you to ${member.workshop.name} on Cellsitter`,
			text:
				`${member.user.name} invited you to join ${member.workshop.name} on Cellsitter as a ${input.role}.\n\n` +
				`Open this link to accept (it works for ${INVITATION_DAYS} days):\n${link}\n\n` +
				`If you did not expect this, you can ignore this message.`,
			html:
				`<p>${escapeHtml(member.user.name)} invited you to join <strong>${escapeHtml(member.workshop.name)}</strong> on Cellsitter as a ${input.role}.</p>` +
				`<p><a href="${link}">Accept the invitation</a> (the link works for ${INVITATION_DAYS} days).</p>` +
				`<p>If you did not expect this, you can ignore this message.</p>`
		});
		return { ok: true, link, mailed: true };
	} catch (e) {
		console.error('invitation mail failed', e);
		return { ok: true, link, mailed: false };
	}
}

export type OpenInvitation = {
	id: string;
	email: string;
	role: Role;
	workshopName: string;
	workshopSlug: string;
	workshopId: string;
};

/** The invitation behind a link, while it is unused and unexpired. */
export async function findInvitation(token: string, now = new Date()): Promise<OpenInvitation | null> {
	return findInvitationIn(db, token, now);
}

async function findInvitationIn(q: Tx | typeof db, token: string, now: Date) {
	const [row] = await q
		.select({
			id: invitations.id,
			email: invitations.email,
			role: invitations.role,
			workshopName: workshops.name,
			workshopSlug: workshops.slug,
			workshopId: workshops.id
		})
		.from(invitations)
		.innerJoin(workshops, eq(workshops.id, invitations.workshopId))
		.where(
			and(
				eq(invitations.tokenHash, hashToken(token)),
				isNull(invitations.acceptedAt),
				gt(invitations.expiresAt, now)
			)
		)
		.limit(1);
	return row ?? null;
}

export type AcceptResult =
	| { ok: true; workshopSlug: string }
	| { ok: false; reason: 'invalid' | 'wrong-email' };

/** Joins the user to the invitation's workshop, inside the caller's transaction. */
export async function acceptInvitationIn(
	tx: Tx,
	user: { id: string; email: string },
	token: string,
	now = new Date()
): Promise<AcceptResult> {
	const invitation = await findInvitationIn(tx, token, now);
	if (!invitation) return { ok: false, reason: 'invalid' };
	if (invitation.email !== user.email.toLowerCase()) return { ok: false, reason: 'wrong-email' };
	const claimed = await tx
		.update(invitations)
		.set({ acceptedAt: now, acceptedBy: user.id })
		.where(and(eq(invitations.id, invitation.id), isNull(invitations.acceptedAt)))
		.returning({ id: invitations.id });
	if (claimed.length === 0) return { ok: false, reason: 'invalid' };
	// Someone already in the workshop keeps the role they have.
	await tx
		.insert(memberships)
		.values({ workshopId: invitation.workshopId, userId: user.id, role: invitation.role })
		.onConflictDoNothing();
	return { ok: true, workshopSlug: invitation.workshopSlug };
}

export async function acceptInvitation(user: { id: string; email: string }, token: string, now = new Date()) {
	return db.transaction((tx) => acceptInvitationIn(tx, user, token, now));
}

export type MemberChange = { ok: true } | { ok: false; reason: 'not-found' | 'last-owner' };

/** Locks the workshop's memberships and refuses a change that would leave it without an owner. */
async function guardLastOwner(tx: Tx, workshopId: string, userId: string, nextRole: Role | null) {
	const rows = await tx
		.select({ userId: memberships.userId, role: memberships.role })
		.from(memberships)
		.where(eq(memberships.workshopId, workshopId))
		.for('update');
	const target = rows.find((r) => r.userId === userId);
	if (!target) return 'not-found' as const;
	const owners = rows.filter((r) => r.role === 'owner').length;
	if (target.role === 'owner' && nextRole !== 'owner' && owners <= 1) return 'last-owner' as const;
	return null;
}

export async function changeRole(member: Member, userId: string, role: Role): Promise<MemberChange> {
	requirePermission(member, 'members.manage');
	return db.transaction(async (tx) => {
		const refusal = await guardLastOwner(tx, member.workshop.id, userId, role);
		if (refusal) return { ok: false, reason: refusal };
		await tx
			.update(memberships)
			.set({ role })
			.where(and(eq(memberships.workshopId, member.workshop.id), eq(memberships.userId, userId)));
		return { ok: true };
	});
}

export async function removeMember(member: Member, userId: string): Promise<MemberChange> {
	requirePermission(member, 'members.manage');
	return db.transaction(async (tx) => {
		const refusal = await guardLastOwner(tx, member.workshop.id, userId, null);
		if (refusal) return { ok: false, reason: refusal };
		await tx
			.delete(memberships)
			.where(and(eq(memberships.workshopId, member.workshop.id), eq(memberships.userId, userId)));
		return { ok: true };
	});
}

export async function revokeInvitation(member: Member, invitationId: string) {
	requirePermission(member, 'members.manage');
	await db
		.delete(invitations)
		.where(and(eq(invitations.id, invitationId), eq(invitations.workshopId, member.workshop.id)));
}
