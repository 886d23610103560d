/** Cell specs: the maker's ratings of one kind of cell, and its chemistry. */
import { error } from '@sveltejs/kit';
import { and, asc, eq } from 'drizzle-orm';
import { chemistries, isChemistryId, type Chemistry } from '$lib/engine';
import { parseChemistryChoice, type CellSpecInput } from '$lib/schemas/packs';
import { requirePermission, type Member } from './auth/permissions';
import { toEngineChemistry } from './chemistry-profiles';
import { db } from './db';
import { isUniqueViolation } from './db/errors';
import { cellSpecs, chemistryProfiles, type CellSpec, type ChemistryProfile } from './db/schema';
import { newId } from './ids';

export type CellSpecWithChemistry = CellSpec & { chemistry: Chemistry; chemistryChoice: string };

/** The engine's chemistry of a spec: a built-in, or the workshop's own profile. */
export function specChemistry(spec: CellSpec, profile: ChemistryProfile | null): Chemistry {
	if (spec.chemistryId && isChemistryId(spec.chemistryId)) return chemistries[spec.chemistryId];
	if (!profile) throw new Error(`cell spec ${spec.id} has no chemistry`);
	return toEngineChemistry(profile);
}

function withChemistry(spec: CellSpec, profile: ChemistryProfile | null): CellSpecWithChemistry {
	return {
		...spec,
		chemistry: specChemistry(spec, profile),
		chemistryChoice: spec.chemistryId ? `builtin:${spec.chemistryId}` : `profile:${spec.chemistryProfileId}`
	};
}

export async function listCellSpecs(member: Member): Promise<CellSpecWithChemistry[]> {
	const rows = await db
		.select({ spec: cellSpecs, profile: chemistryProfiles })
		.from(cellSpecs)
		.leftJoin(chemistryProfiles, eq(chemistryProfiles.id, cellSpecs.chemistryProfileId))
		.where(eq(cellSpecs.workshopId, member.workshop.id))
		.orderBy(asc(cellSpecs.name));
	return rows.map((r) => withChemistry(r.spec, r.profile));
}

/** One spec of the member's workshop, or 404. */
export async function getCellSpec(member: Member, specId: string): Promise<CellSpecWithChemistry> {
	const [row] = await db
		.select({ spec: cellSpecs, profile: chemistryProfiles })
		.from(cellSpecs)
		.leftJoin(chemistryProfiles, eq(chemistryProfiles.id, cellSpecs.chemistryProfileId))
		.where(and(eq(cellSpecs.id, specId), eq(cellSpecs.workshopId, member.workshop.id)));
	if (!row) error(404, 'Not found');
	return withChemistry(row.spec, row.profile);
}

export type SpecWriteResult =
	| { ok: true; spec: CellSpec }
	| { ok: false; reason: 'name-taken' | 'unknown-profile'; message: string };

async function checkProfile(member: Member, profileId: string | null) {
	if (!profileId) return true;
	const [row] = await db
		.select({ id: chemistryProfiles.id })
		.from(chemistryProfiles)
		.where(and(eq(chemistryProfiles.id, profileId), eq(chemistryProfiles.workshopId, member.workshop.id)));
	return Boolean(row);
}

function values(input: CellSpecInput) {
	return {
		name: input.name,
		...parseChemistryChoice(input.chemistry),
		capacityAh: input.capacityAh,
		maxContinuousAmps: input.maxContinuousAmps,
		maxBurstAmps: input.maxBurstAmps,
		// A duration means nothing without the burst current it limits (the schema refuses that too).
		maxBurstSeconds: input.maxBurstAmps === null ? null : (input.maxBurstSeconds ?? null),
		maxChargeAmps: input.maxChargeAmps,
		resistanceMilliOhms: input.resistanceMilliOhms
	};
}

const nameTaken = (name: string) =>
	({ ok: false, reason: 'name-taken', message: `A cell spec named “${name}” already exists.` }) as const;
const unknownProfile = {
	ok: false,
	reason: 'unknown-profile',
	message: 'That chemistry profile does not exist in this workshop.'
} as const;

export async function createCellSpec(member: Member, input: CellSpecInput): Promise<SpecWriteResult> {
	requirePermission(member, 'specs.edit');
	const v = values(input);
	if (!(await checkProfile(member, v.chemistryProfileId))) return unknownProfile;
	const inserted = await db
		.insert(cellSpecs)
		.values({ id: newId(), workshopId: member.workshop.id, ...v, createdBy: member.user.id, updatedBy: member.user.id })
		.onConflictDoNothing()
		.returning();
	return inserted[0] ? { ok: true, spec: inserted[0] } : nameTaken(input.name);
}

export async function updateCellSpec(member: Member, specId: string, input: CellSpecInput): Promise<SpecWriteResult> {
	requirePermission(member, 'specs.edit');
	await getCellSpec(member, specId);
	const v = values(input);
	if (!(await checkProfile(member, v.chemistryProfileId))) return unknownProfile;
	try {
		const [spec] = await db
			.update(cellSpecs)
			.set({ ...v, updatedBy: member.user.id, updatedAt: new Date() })
			.where(and(eq(cellSpecs.id, specId), eq(cellSpecs.workshopId, member.workshop.id)))
			.returning();
		return { ok: true, spec };
	} catch (e) {
		if (isUniqueViolation(e)) return nameTaken(input.name);
		throw e;
	}
}
