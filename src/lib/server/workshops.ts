/**
 * Workshops: making one, naming it, and which ones a person belongs to. Who is in a workshop
 * lives in workshops-members.ts; how people join, in workshops-invitations.ts.
 */
import { asc, eq, like, or, sql } from 'drizzle-orm';
import type { Role } from '$lib/permissions';
import { requirePermission, type Member } from './auth/permissions';
import { db, type Tx } from './db';
import { memberships, workshops, type Workshop } from './db/schema';
import { newId } from './ids';

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

/** Minutes a critical alert may stay unacknowledged before it goes to every owner (workshop.edit; 1–240). */
export async function setEscalationMinutes(member: Member, minutes: number) {
	requirePermission(member, 'workshop.edit');
	await db.update(workshops).set({ escalationMinutes: minutes }).where(eq(workshops.id, member.workshop.id));
}
