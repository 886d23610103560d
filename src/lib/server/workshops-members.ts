/** The people of a workshop: who they are, their roles, and taking someone out. */
import { and, asc, eq } from 'drizzle-orm';
import type { Role } from '$lib/permissions';
import { requirePermission, type Member } from './auth/permissions';
import { db, type Tx } from './db';
import { memberships, packs, users } from './db/schema';

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

type Refusal = { ok: false; reason: 'not-found' | 'last-owner' };
export type MemberChange = { ok: true } | Refusal;
/** `clearedPacks`: names of the packs the removed person was pack owner of, now without one. */
export type MemberRemoval = { ok: true; name: string; clearedPacks: string[] } | Refusal;

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

/**
 * Takes a person out of the workshop. A pack owner who is no longer a member would still see
 * their packs as a viewer's own, so their packs here lose their pack owner in the same transaction.
 */
export async function removeMember(member: Member, userId: string, now = new Date()): Promise<MemberRemoval> {
	requirePermission(member, 'members.manage');
	return db.transaction(async (tx) => {
		const refusal = await guardLastOwner(tx, member.workshop.id, userId, null);
		if (refusal) return { ok: false, reason: refusal };
		const [person] = await tx.select({ name: users.name }).from(users).where(eq(users.id, userId));
		const cleared = await tx
			.update(packs)
			.set({ packOwnerId: null, updatedBy: member.user.id, updatedAt: now })
			.where(and(eq(packs.workshopId, member.workshop.id), eq(packs.packOwnerId, userId)))
			.returning({ name: packs.name });
		await tx
			.delete(memberships)
			.where(and(eq(memberships.workshopId, member.workshop.id), eq(memberships.userId, userId)));
		return {
			ok: true,
			name: person?.name ?? 'That person',
			clearedPacks: cleared.map((p) => p.name).sort((a, b) => a.localeCompare(b))
		};
	});
}

/** The sentence the members page shows after a removal. */
export function removalMessage(removal: { name: string; clearedPacks: string[] }): string {
	const { name, clearedPacks } = removal;
	if (clearedPacks.length === 0) return `${name} is no longer a member.`;
	if (clearedPacks.length === 1) {
		return `${name} is no longer a member. They were the pack owner of ${clearedPacks[0]}; that pack now has no pack owner.`;
	}
	const list = `${clearedPacks.slice(0, -1).join(', ')} and ${clearedPacks.at(-1)}`;
	return `${name} is no longer a member. They were the pack owner of ${list}; those packs now have no pack owner.`;
}
