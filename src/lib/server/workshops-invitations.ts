/** Invitations: the single-use, 7-day link that lets someone join a workshop with a role. */
import { and, asc, eq, gt, isNull } from 'drizzle-orm';
import type { Role } from '$lib/permissions';
import { requirePermission, type Member } from './auth/permissions';
import { db, type Tx } from './db';
import { invitations, memberships, users, workshops } from './db/schema';
import { publicOrigin } from './env';
import { hashToken, newId, newToken } from './ids';
import { canSendMail, escapeHtml, sendMail } from './mail';

export const INVITATION_DAYS = 7;

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

/**
 * Records an invitation and e-mails its link, built on the configured origin (never the
 * request's Host); the link is returned so the owner can pass it on when no mail could go out.
 */
export async function inviteMember(
	member: Member,
	input: { email: string; role: Role },
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
	const link = `${publicOrigin()}/invite/${token}`;
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
				`<p><a href="${escapeHtml(link)}">Accept the invitation</a> (the link works for ${INVITATION_DAYS} days).</p>` +
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

export async function revokeInvitation(member: Member, invitationId: string) {
	requirePermission(member, 'members.manage');
	await db
		.delete(invitations)
		.where(and(eq(invitations.id, invitationId), eq(invitations.workshopId, member.workshop.id)));
}
