/** Packs of a workshop: who may see which, the pack's record, its groups and ratings. */
import { error } from '@sveltejs/kit';
import { and, asc, count, eq, inArray, sql } from 'drizzle-orm';
import type { PackRatings } from '$lib/engine';
import { plainEngineMessage } from '$lib/engine-words';
import { rateSpecPack } from '$lib/pack-ratings';
import { can } from '$lib/permissions';
import type { PackInput } from '$lib/schemas/packs';
import { requirePermission, type Member } from './auth/permissions';
import { getCellSpec, type CellSpecWithChemistry } from './cell-specs';
import { db, type Tx } from './db';
import { cells, cellSpecs, chargeSessions, memberships, packGroups, packs, users, type Pack } from './db/schema';
import { newId } from './ids';

/** True when the member may see this pack: every role but viewer sees all; a viewer only their own. */
export function canSeePack(member: Member, pack: Pick<Pack, 'workshopId' | 'packOwnerId'>): boolean {
	if (pack.workshopId !== member.workshop.id) return false;
	if (can(member.role, 'packs.viewAll')) return true;
	return can(member.role, 'packs.viewOwn') && pack.packOwnerId === member.user.id;
}

/**
 * Locks the pack row of the member's workshop for the rest of `tx` and reads it again (undefined
 * when it is gone). Everything that reads a pack's shape or batch and then writes — a topology
 * edit, a matching accept, a measurement edit — starts with this, so such writes never interleave.
 * `share` lets writers that only add (cell imports) run side by side while still waiting for those.
 */
export async function lockPack(tx: Tx, member: Member, packId: string, mode: 'update' | 'share' = 'update'): Promise<Pack | undefined> {
	const [pack] = await tx
		.select()
		.from(packs)
		.where(and(eq(packs.id, packId), eq(packs.workshopId, member.workshop.id)))
		.for(mode);
	return pack;
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

export type PackSummary = {
	id: string;
	name: string;
	series: number;
	parallel: number;
	status: Pack['status'];
	specName: string;
	ownerName: string | null;
	cellCount: number;
	placedCount: number;
	updatedAt: Date;
};

/** The packs the member may see, by name, with cell counts (one query). */
export async function listPacks(member: Member): Promise<PackSummary[]> {
	requirePermission(member, 'packs.viewOwn');
	const visible = can(member.role, 'packs.viewAll')
		? eq(packs.workshopId, member.workshop.id)
		: and(eq(packs.workshopId, member.workshop.id), eq(packs.packOwnerId, member.user.id));
	return db
		.select({
			id: packs.id,
			name: packs.name,
			series: packs.series,
			parallel: packs.parallel,
			status: packs.status,
			specName: cellSpecs.name,
			ownerName: users.name,
			cellCount: count(cells.id),
			placedCount: sql<number>`count(${cells.id}) filter (where ${cells.placement} = 'group')`.mapWith(Number),
			updatedAt: packs.updatedAt
		})
		.from(packs)
		.innerJoin(cellSpecs, eq(cellSpecs.id, packs.cellSpecId))
		.leftJoin(users, eq(users.id, packs.packOwnerId))
		.leftJoin(cells, eq(cells.packId, packs.id))
		.where(visible)
		.groupBy(packs.id, cellSpecs.name, users.name)
		.orderBy(asc(packs.name));
}

export type PackWriteResult =
	| { ok: true; pack: Pack; clearedAssignment: boolean }
	| { ok: false; reason: 'unknown-spec' | 'owner-not-member'; field: 'cellSpecId' | 'packOwnerId'; message: string }
	| { ok: false; reason: 'keeps-shape'; field: 'series' | 'parallel' | 'cellSpecId'; message: string };

async function isMemberOf(tx: Tx | typeof db, workshopId: string, userId: string) {
	const [row] = await tx
		.select({ userId: memberships.userId })
		.from(memberships)
		.where(and(eq(memberships.workshopId, workshopId), eq(memberships.userId, userId)));
	return Boolean(row);
}

async function checkRefs(member: Member, input: Partial<PackInput>): Promise<PackWriteResult | null> {
	if (input.cellSpecId) {
		const [spec] = await db
			.select({ id: cellSpecs.id })
			.from(cellSpecs)
			.where(and(eq(cellSpecs.id, input.cellSpecId), eq(cellSpecs.workshopId, member.workshop.id)));
		if (!spec) return { ok: false, reason: 'unknown-spec', field: 'cellSpecId', message: 'Choose a cell spec of this workshop.' };
	}
	if (input.packOwnerId && !(await isMemberOf(db, member.workshop.id, input.packOwnerId))) {
		return { ok: false, reason: 'owner-not-member', field: 'packOwnerId', message: 'The pack owner must be a member of this workshop.' };
	}
	return null;
}

function columns(input: Partial<PackInput>) {
	const { packOwnerId, bmsFitted, bmsBalanceAmps, ...rest } = input;
	return {
		...rest,
		...(packOwnerId !== undefined ? { packOwnerId: packOwnerId || null } : {}),
		...(bmsFitted !== undefined ? { bmsFitted } : {}),
		// A balance current only means something with a BMS fitted.
		...(bmsBalanceAmps !== undefined || bmsFitted === false
			? { bmsBalanceAmps: bmsFitted === false ? null : (bmsBalanceAmps ?? null) }
			: {})
	};
}

/** A new pack with its groups 1..S, in one transaction. */
export async function createPack(member: Member, input: PackInput): Promise<PackWriteResult> {
	requirePermission(member, 'packs.edit');
	const refused = await checkRefs(member, input);
	if (refused) return refused;
	const pack = await db.transaction(async (tx) => {
		const [pack] = await tx
			.insert(packs)
			.values({
				id: newId(),
				workshopId: member.workshop.id,
				...columns(input),
				name: input.name,
				cellSpecId: input.cellSpecId,
				series: input.series,
				parallel: input.parallel,
				createdBy: member.user.id,
				updatedBy: member.user.id
			} as typeof packs.$inferInsert)
			.returning();
		await tx.insert(packGroups).values(
			Array.from({ length: input.series }, (_, i) => ({ id: newId(), packId: pack.id, index: i + 1 }))
		);
		return pack;
	});
	return { ok: true, pack, clearedAssignment: false };
}

/**
 * Why a pack with charge sessions keeps its shape: the readings and plans recorded against its
 * groups only mean something for the layout they were taken on. (The packs_keep_shape trigger
 * refuses the same change on any other path.)
 */
export const PACK_KEEPS_SHAPE =
	'This pack has charge sessions: its groups in series, cells per group and cell spec stay as they are, so that its readings keep their meaning. Make a new pack for another layout.';

/** True once the pack has a charge session (its shape is then fixed). */
export async function hasSessions(tx: Tx | typeof db, packId: string): Promise<boolean> {
	const [row] = await tx.select({ id: chargeSessions.id }).from(chargeSessions).where(eq(chargeSessions.packId, packId)).limit(1);
	return Boolean(row);
}

/**
 * Changes a pack. A new topology or cell spec clears the matching (the cells go back to unsorted)
 * and adds or removes groups — all in one transaction that starts by locking the pack row and
 * reads the pack again under the lock, so two edits, or an edit and an accepted matching
 * (acceptMatching locks the same row), never interleave: the later one sees what the earlier wrote.
 * A pack with charge sessions keeps its shape (409); createSession takes the same lock.
 */
export async function updatePack(member: Member, packId: string, input: Partial<PackInput>): Promise<PackWriteResult> {
	requirePermission(member, 'packs.edit');
	await requirePack(member, packId);
	const refused = await checkRefs(member, input);
	if (refused) return refused;

	return db.transaction(async (tx) => {
		const current = await lockPack(tx, member, packId);
		if (!current) error(404, 'Not found');
		const series = input.series ?? current.series;
		const topologyChanged =
			series !== current.series ||
			(input.parallel ?? current.parallel) !== current.parallel ||
			(input.cellSpecId ?? current.cellSpecId) !== current.cellSpecId;
		if (topologyChanged && (await hasSessions(tx, packId))) {
			const field = series !== current.series ? 'series' : (input.parallel ?? current.parallel) !== current.parallel ? 'parallel' : 'cellSpecId';
			return { ok: false as const, reason: 'keeps-shape' as const, field, message: PACK_KEEPS_SHAPE };
		}
		let clearedAssignment = false;
		if (topologyChanged) {
			const cleared = await tx
				.update(cells)
				.set({ placement: 'unsorted', groupId: null, updatedBy: member.user.id, updatedAt: new Date() })
				.where(and(eq(cells.packId, packId), eq(cells.placement, 'group')))
				.returning({ id: cells.id });
			clearedAssignment = cleared.length > 0;
			if (series > current.series) {
				await tx.insert(packGroups).values(
					Array.from({ length: series - current.series }, (_, i) => ({
						id: newId(),
						packId,
						index: current.series + i + 1
					}))
				);
			} else if (series < current.series) {
				await tx.delete(packGroups).where(and(eq(packGroups.packId, packId), sql`${packGroups.index} > ${series}`));
			}
		}
		const [pack] = await tx
			.update(packs)
			.set({ ...columns(input), updatedBy: member.user.id, updatedAt: new Date() })
			.where(eq(packs.id, packId))
			.returning();
		return { ok: true as const, pack, clearedAssignment };
	});
}

export type PackView = {
	pack: Pack;
	spec: CellSpecWithChemistry;
	ownerName: string | null;
	updatedByName: string | null;
	ratings: PackRatings | null;
	ratingsProblem: string | null;
};

/** A pack with its spec, chemistry and ratings from the engine. */
export async function getPackView(member: Member, packId: string): Promise<PackView> {
	const pack = await requirePack(member, packId);
	return packView(pack, await getCellSpec(member, pack.cellSpecId));
}

/** The view of a pack already loaded (and checked) with its spec: names and ratings. */
export async function packView(pack: Pack, spec: CellSpecWithChemistry): Promise<PackView> {
	const people = [pack.packOwnerId, pack.updatedBy].filter((id): id is string => Boolean(id));
	const named = people.length
		? await db.select({ id: users.id, name: users.name }).from(users).where(inArray(users.id, people))
		: [];
	const nameOf = (id: string | null) => named.find((u) => u.id === id)?.name ?? null;
	const rated = rateSpecPack(spec, pack);
	return {
		pack,
		spec,
		ownerName: nameOf(pack.packOwnerId),
		updatedByName: nameOf(pack.updatedBy),
		ratings: rated.ok ? rated : null,
		ratingsProblem: rated.ok ? null : plainEngineMessage(rated)
	};
}

/** The pack's groups 1..S with their ids. */
export async function listGroups(packId: string) {
	return db.select().from(packGroups).where(eq(packGroups.packId, packId)).orderBy(asc(packGroups.index));
}

/** Members who may be named as a pack's owner. */
export async function packOwnerChoices(member: Member) {
	return db
		.select({ userId: users.id, name: users.name, role: memberships.role })
		.from(memberships)
		.innerJoin(users, eq(users.id, memberships.userId))
		.where(eq(memberships.workshopId, member.workshop.id))
		.orderBy(asc(users.name));
}

