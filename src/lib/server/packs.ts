/** Packs of a workshop: who may see which, and the pack's own record. */
import { error } from '@sveltejs/kit';
import { and, eq } from 'drizzle-orm';
import { can } from '$lib/permissions';
import { requirePermission, type Member } from './auth/permissions';
import { db } from './db';
import { packs, type Pack } from './db/schema';

/** True when the member may see this pack: every role but viewer sees all; a viewer only their own. */
export function canSeePack(member: Member, pack: Pick<Pack, 'workshopId' | 'packOwnerId'>): boolean {
	if (pack.workshopId !== member.workshop.id) return false;
	if (can(member.role, 'packs.viewAll')) return true;
	return can(member.role, 'packs.viewOwn') && pack.packOwnerId === member.user.id;
}

/** The pack, when the member may see it; 404 otherwise (another workshop's pack is never confirmed). */
export async function requirePack(member: Member, packId: string): Promise<Pack> {
	requirePermission(member, 'packs.viewOwn');
	const [pack] = await db
		.select()
		.from(packs)
		.where(and(eq(packs.id, packId), eq(packs.workshopId, member.workshop.id)));
	if (!pack || !canSeePack(member, pack)) error(404, 'Not found');
	return pack;
}
