/** The workshop's chargers and their channels: what the plans spread groups over. */
import { error } from '@sveltejs/kit';
import { and, asc, eq } from 'drizzle-orm';
import type { Channel } from '$lib/engine';
import type { ChargerInput } from '$lib/schemas/chargers';
import { requirePermission, type Member } from './auth/permissions';
import { db, type Tx } from './db';
import { PG, pgCode } from './db/errors';
import { chargerChannels, chargers, users, type Charger, type ChargerChannel } from './db/schema';
import { newId } from './ids';

export type ChargerWithChannels = Charger & { channels: ChargerChannel[] };
/** One charger for its own page: who changed it last, by name. */
export type ChargerDetail = ChargerWithChannels & { updatedByName: string | null };

export type ChargerWriteResult =
	| { ok: true; charger: ChargerWithChannels }
	| { ok: false; reason: 'name-taken'; message: string };

export type ChargerDeleteResult = { ok: true } | { ok: false; reason: 'in-use'; message: string };

const nameTaken = (name: string) =>
	({ ok: false, reason: 'name-taken', message: `There is already a charger called “${name}”.` }) as const;

/** Rows of a charger ⟕ channels join → chargers with their channels, in the order the rows came. */
function groupChannels(rows: { charger: Charger; channel: ChargerChannel | null }[]): ChargerWithChannels[] {
	const byId = new Map<string, ChargerWithChannels>();
	for (const { charger, channel } of rows) {
		let entry = byId.get(charger.id);
		if (!entry) {
			entry = { ...charger, channels: [] };
			byId.set(charger.id, entry);
		}
		if (channel) entry.channels.push(channel);
	}
	return [...byId.values()];
}

/** Every charger of the member's workshop by name, each with its channels in order. */
export async function listChargers(member: Member): Promise<ChargerWithChannels[]> {
	requirePermission(member, 'chargers.view');
	const rows = await db
		.select({ charger: chargers, channel: chargerChannels })
		.from(chargers)
		.leftJoin(chargerChannels, eq(chargerChannels.chargerId, chargers.id))
		.where(eq(chargers.workshopId, member.workshop.id))
		.orderBy(asc(chargers.name), asc(chargers.id), asc(chargerChannels.position));
	return groupChannels(rows);
}

/** One charger of the member's workshop, or 404 (another workshop's charger is never confirmed). */
export async function getCharger(member: Member, chargerId: string): Promise<ChargerDetail> {
	requirePermission(member, 'chargers.view');
	const rows = await db
		.select({ charger: chargers, channel: chargerChannels, updatedByName: users.name })
		.from(chargers)
		.leftJoin(chargerChannels, eq(chargerChannels.chargerId, chargers.id))
		.leftJoin(users, eq(users.id, chargers.updatedBy))
		.where(and(eq(chargers.id, chargerId), eq(chargers.workshopId, member.workshop.id)))
		.orderBy(asc(chargerChannels.position));
	const [charger] = groupChannels(rows);
	if (!charger) error(404, 'Not found');
	return { ...charger, updatedByName: rows[0].updatedByName };
}

async function insertChannels(tx: Tx, chargerId: string, channels: ChargerInput['channels']) {
	return tx
		.insert(chargerChannels)
		.values(
			channels.map((c, i) => ({
				id: newId(),
				chargerId,
				position: i + 1,
				name: c.name?.trim() || `Channel ${i + 1}`,
				maxVolts: c.maxVolts,
				maxAmps: c.maxAmps,
				maxWatts: c.maxWatts ?? null,
				balanceAmps: c.balanceAmps ?? null,
				maxSeriesCells: c.maxSeriesCells ?? null
			}))
		)
		.returning();
}

/** Records a charger with its channels, or refuses a name the workshop already uses. */
export async function createCharger(member: Member, input: ChargerInput): Promise<ChargerWriteResult> {
	requirePermission(member, 'chargers.edit');
	return db.transaction(async (tx) => {
		const [charger] = await tx
			.insert(chargers)
			.values({
				id: newId(),
				workshopId: member.workshop.id,
				name: input.name.trim(),
				kind: input.kind,
				notes: input.notes?.trim() ?? '',
				createdBy: member.user.id,
				updatedBy: member.user.id
			})
			.onConflictDoNothing()
			.returning();
		if (!charger) return nameTaken(input.name.trim());
		const channels = await insertChannels(tx, charger.id, input.channels);
		return { ok: true, charger: { ...charger, channels } };
	});
}

/**
 * Changes a charger and replaces all its channels in one transaction: a channel the database
 * refuses leaves the old charger and channels exactly as they were.
 */
export async function updateCharger(member: Member, chargerId: string, input: ChargerInput): Promise<ChargerWriteResult> {
	requirePermission(member, 'chargers.edit');
	try {
		return await db.transaction(async (tx) => {
			const [charger] = await tx
				.update(chargers)
				.set({
					name: input.name.trim(),
					kind: input.kind,
					notes: input.notes?.trim() ?? '',
					updatedBy: member.user.id,
					updatedAt: new Date()
				})
				.where(and(eq(chargers.id, chargerId), eq(chargers.workshopId, member.workshop.id)))
				.returning();
			if (!charger) error(404, 'Not found');
			await tx.delete(chargerChannels).where(eq(chargerChannels.chargerId, charger.id));
			const channels = await insertChannels(tx, charger.id, input.channels);
			return { ok: true as const, charger: { ...charger, channels } };
		});
	} catch (e) {
		if (pgCode(e) === PG.uniqueViolation) return nameTaken(input.name.trim());
		throw e;
	}
}

/** Deletes a charger and its channels; refused while a record elsewhere still points at it. */
export async function deleteCharger(member: Member, chargerId: string): Promise<ChargerDeleteResult> {
	requirePermission(member, 'chargers.edit');
	try {
		const deleted = await db
			.delete(chargers)
			.where(and(eq(chargers.id, chargerId), eq(chargers.workshopId, member.workshop.id)))
			.returning({ id: chargers.id });
		if (deleted.length === 0) error(404, 'Not found');
		return { ok: true };
	} catch (e) {
		// Sessions and plans that used the charger keep it (restricting foreign keys).
		if (pgCode(e) === PG.foreignKeyViolation) {
			return { ok: false, reason: 'in-use', message: 'This charger is part of a charge plan or session, so it stays.' };
		}
		throw e;
	}
}

/** A channel row as the engine's Channel (amps, volts, and watts when the maker states them). */
export function toEngineChannel(channel: ChargerChannel): Channel {
	return {
		id: channel.id,
		maxAmps: channel.maxAmps,
		maxVolts: channel.maxVolts,
		...(channel.maxWatts != null ? { maxWatts: channel.maxWatts } : {})
	};
}
