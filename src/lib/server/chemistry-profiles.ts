/**
 * Chemistries a workshop can choose for its cell specs: the engine's built-ins and the workshop's
 * own profiles, made from a cell's datasheet.
 */
import { error } from '@sveltejs/kit';
import { and, asc, count, eq } from 'drizzle-orm';
import {
	chemistries,
	familyOf,
	isChemistryId,
	resolveChemistry,
	type Chemistry,
	type ChemistryFamily,
	type ChemistryId
} from '$lib/engine';
import { beyondUsualLimits, datasheetConfirmationMessage } from '$lib/chemistry-form';
import { plainEngineMessage } from '$lib/engine-words';
import { socFromPercent, type ChemistryProfileInput } from '$lib/schemas/chemistry';
import { requirePermission, type Member } from './auth/permissions';
import { db } from './db';
import { PG, pgCode } from './db/errors';
import { cellSpecs, chemistryProfiles, users, type ChemistryProfile } from './db/schema';
import { newId } from './ids';

/** One entry of the chemistry list: a built-in of the engine or one of the workshop's own. */
export type ChemistryOption = {
	/** The built-in's id (nmc…lto) or the profile's record id. */
	id: string;
	name: string;
	isBuiltIn: boolean;
	family: ChemistryFamily;
	chemistry: Chemistry;
	restCurveApproximate: boolean;
	/** What a cell spec stores: exactly one of the two is set. */
	chemistryId: ChemistryId | null;
	chemistryProfileId: string | null;
	source: string;
	/** How many of the workshop's cell specs use it (own profiles only; 0 for built-ins). */
	usedBySpecs: number;
	updatedAt: Date | null;
};

export type ChemistryRef = { chemistryId?: string | null; chemistryProfileId?: string | null };

export type ProfileWriteResult =
	| { ok: true; profile: ChemistryProfile }
	| { ok: false; reason: 'name-taken' | 'invalid-chemistry' | 'needs-datasheet'; message: string };

export type ProfileDeleteResult = { ok: true } | { ok: false; reason: 'in-use'; message: string };

export type ChemistryProfileDetail = ChemistryProfile & { updatedByName: string | null; usedBySpecs: string[] };

const builtInIds = Object.keys(chemistries) as ChemistryId[];

/** A profile row as the engine's Chemistry; its curve is the datasheet's, so not marked approximate. */
export function toEngineChemistry(row: ChemistryProfile): Chemistry {
	return {
		id: row.id,
		name: row.name,
		nominalVolts: row.nominalVolts,
		maxChargeVolts: row.maxChargeVolts,
		fullDischargeVolts: row.fullDischargeVolts,
		minVolts: row.minVolts,
		storageVolts: row.storageVolts,
		chargeTempC: { min: row.chargeTempMinC, max: row.chargeTempMaxC },
		dischargeTempC: { min: row.dischargeTempMinC, max: row.dischargeTempMaxC },
		defaultChargeC: row.defaultChargeC,
		terminationC: row.terminationC,
		cvShareAt1C: row.cvShareAt1C,
		restCurve: row.restCurve.map(([soc, volts]) => [soc, volts] as [number, number]),
		restCurveApproximate: false,
		family: row.family
	};
}

/** The columns a form's input sets, with state of charge turned from percent into 0..1. */
function columns(input: ChemistryProfileInput) {
	return {
		name: input.name.trim(),
		family: input.family,
		nominalVolts: input.nominalVolts,
		maxChargeVolts: input.maxChargeVolts,
		fullDischargeVolts: input.fullDischargeVolts,
		minVolts: input.minVolts,
		storageVolts: input.storageVolts,
		chargeTempMinC: input.chargeTempMinC,
		chargeTempMaxC: input.chargeTempMaxC,
		dischargeTempMinC: input.dischargeTempMinC,
		dischargeTempMaxC: input.dischargeTempMaxC,
		defaultChargeC: input.defaultChargeC,
		terminationC: input.terminationC,
		cvShareAt1C: input.cvShareAt1C,
		restCurve: input.restCurve.map((p) => [socFromPercent(p.socPercent), p.volts] as [number, number]),
		source: input.source?.trim() ?? ''
	};
}

/** The engine's verdict on a profile before it is saved: null when usable, else why not, in the form's words. */
function engineRefusal(values: ReturnType<typeof columns>): string | null {
	const draft = toEngineChemistry({ ...values, id: 'draft' } as ChemistryProfile);
	const resolved = resolveChemistry(draft);
	return 'ok' in resolved ? plainEngineMessage(resolved) : null;
}

/**
 * Why a profile may not be saved as it stands: the engine cannot use it, or it charges past its
 * family's usual limits (or below 0 °C) without the builder confirming the datasheet allows it.
 */
function refusal(input: ChemistryProfileInput, values: ReturnType<typeof columns>): ProfileWriteResult | null {
	const engine = engineRefusal(values);
	if (engine) return { ok: false, reason: 'invalid-chemistry', message: engine };
	const beyond = beyondUsualLimits(input);
	if (beyond.length && input.datasheetAllows !== true) {
		return { ok: false, reason: 'needs-datasheet', message: datasheetConfirmationMessage(beyond) };
	}
	return null;
}

function builtInOption(id: ChemistryId): ChemistryOption {
	const chemistry = chemistries[id];
	return {
		id,
		name: chemistry.name,
		isBuiltIn: true,
		family: familyOf(chemistry),
		chemistry,
		restCurveApproximate: chemistry.restCurveApproximate,
		chemistryId: id,
		chemistryProfileId: null,
		source: '',
		usedBySpecs: 0,
		updatedAt: null
	};
}

/** The built-ins (engine order) then the workshop's own profiles by name. */
export async function listChemistries(member: Member): Promise<ChemistryOption[]> {
	requirePermission(member, 'packs.viewAll');
	const rows = await db
		.select({ profile: chemistryProfiles, usedBySpecs: count(cellSpecs.id) })
		.from(chemistryProfiles)
		.leftJoin(cellSpecs, eq(cellSpecs.chemistryProfileId, chemistryProfiles.id))
		.where(eq(chemistryProfiles.workshopId, member.workshop.id))
		.groupBy(chemistryProfiles.id)
		.orderBy(asc(chemistryProfiles.name));
	const own = rows.map(({ profile, usedBySpecs }): ChemistryOption => ({
		id: profile.id,
		name: profile.name,
		isBuiltIn: false,
		family: profile.family,
		chemistry: toEngineChemistry(profile),
		restCurveApproximate: false,
		chemistryId: null,
		chemistryProfileId: profile.id,
		source: profile.source,
		usedBySpecs,
		updatedAt: profile.updatedAt
	}));
	return [...builtInIds.map(builtInOption), ...own];
}

/** One of the workshop's own profiles with the names of the cell specs using it, or 404. */
export async function getChemistryProfile(member: Member, profileId: string): Promise<ChemistryProfileDetail> {
	requirePermission(member, 'packs.viewAll');
	const rows = await db
		.select({ profile: chemistryProfiles, updatedByName: users.name, specName: cellSpecs.name })
		.from(chemistryProfiles)
		.leftJoin(users, eq(users.id, chemistryProfiles.updatedBy))
		.leftJoin(cellSpecs, eq(cellSpecs.chemistryProfileId, chemistryProfiles.id))
		.where(and(eq(chemistryProfiles.id, profileId), eq(chemistryProfiles.workshopId, member.workshop.id)))
		.orderBy(asc(cellSpecs.name));
	if (rows.length === 0) error(404, 'Not found');
	return {
		...rows[0].profile,
		updatedByName: rows[0].updatedByName,
		usedBySpecs: rows.flatMap((r) => (r.specName ? [r.specName] : []))
	};
}

const nameTaken = (name: string) =>
	({ ok: false, reason: 'name-taken', message: `There is already a chemistry profile called “${name}”.` }) as const;

/** Saves a new profile once the engine accepts it. */
export async function createChemistryProfile(member: Member, input: ChemistryProfileInput): Promise<ProfileWriteResult> {
	requirePermission(member, 'specs.edit');
	const values = columns(input);
	const refused = refusal(input, values);
	if (refused) return refused;
	const [profile] = await db
		.insert(chemistryProfiles)
		.values({ id: newId(), workshopId: member.workshop.id, ...values, createdBy: member.user.id, updatedBy: member.user.id })
		.onConflictDoNothing()
		.returning();
	return profile ? { ok: true, profile } : nameTaken(values.name);
}

/** Changes a profile once the engine accepts it; cell specs using it follow the new values. */
export async function updateChemistryProfile(
	member: Member,
	profileId: string,
	input: ChemistryProfileInput
): Promise<ProfileWriteResult> {
	requirePermission(member, 'specs.edit');
	const values = columns(input);
	const refused = refusal(input, values);
	if (refused) return refused;
	try {
		const [profile] = await db
			.update(chemistryProfiles)
			.set({ ...values, updatedBy: member.user.id, updatedAt: new Date() })
			.where(and(eq(chemistryProfiles.id, profileId), eq(chemistryProfiles.workshopId, member.workshop.id)))
			.returning();
		if (!profile) error(404, 'Not found');
		return { ok: true, profile };
	} catch (e) {
		if (pgCode(e) === PG.uniqueViolation) return nameTaken(values.name);
		throw e;
	}
}

/** Deletes a profile; refused while any cell spec uses it (the foreign key restricts it too). */
export async function deleteChemistryProfile(member: Member, profileId: string): Promise<ProfileDeleteResult> {
	requirePermission(member, 'specs.edit');
	const profile = await getChemistryProfile(member, profileId);
	const inUse = (names: string[]): ProfileDeleteResult => ({
		ok: false,
		reason: 'in-use',
		message: names.length
			? `Cell specs use this profile (${names.join(', ')}). Give them another chemistry first.`
			: 'A cell spec uses this profile. Give it another chemistry first.'
	});
	if (profile.usedBySpecs.length) return inUse(profile.usedBySpecs);
	try {
		await db
			.delete(chemistryProfiles)
			.where(and(eq(chemistryProfiles.id, profileId), eq(chemistryProfiles.workshopId, member.workshop.id)));
		return { ok: true };
	} catch (e) {
		// A cell spec chose this profile between the check and the delete.
		if (pgCode(e) === PG.foreignKeyViolation) return inUse([]);
		throw e;
	}
}

/**
 * The engine's Chemistry behind a cell spec's choice: a built-in id, or one of the member's
 * workshop's own profiles (404 when it is not theirs).
 */
export async function resolveChemistryRef(member: Member, ref: ChemistryRef): Promise<Chemistry> {
	requirePermission(member, 'packs.viewOwn');
	if (ref.chemistryId) {
		if (!isChemistryId(ref.chemistryId)) error(404, 'Not found');
		return chemistries[ref.chemistryId];
	}
	if (!ref.chemistryProfileId) throw new Error('A chemistry reference needs chemistryId or chemistryProfileId.');
	const [row] = await db
		.select()
		.from(chemistryProfiles)
		.where(and(eq(chemistryProfiles.id, ref.chemistryProfileId), eq(chemistryProfiles.workshopId, member.workshop.id)));
	if (!row) error(404, 'Not found');
	return toEngineChemistry(row);
}
