/**
 * The demo's self-discharge check (invented data, never a test's check value): after the cargo
 * trike's charge a month of riding later, the technician measured its thirteen groups at rest the
 * next day and again three and a half days later, with nothing connected. Group 7 — the one that
 * ended that charge 40 mV below the others — loses charge faster than the rest.
 */
import { and, asc, eq } from 'drizzle-orm';
import { db } from '../db';
import { packGroups, packs, users, voltageChecks, workshops } from '../db/schema';
import { newId } from '../ids';
import { seeded } from './packs';

const HOUR = 3_600_000;

/** Adds the trike's two rounds of group checks (3.5 days apart, the second 2 hours ago). */
export async function loadDemoSelfDischarge(slug: string, technicianEmail: string, now = new Date()): Promise<void> {
	const [row] = await db
		.select({ workshopId: workshops.id, packId: packs.id })
		.from(packs)
		.innerJoin(workshops, eq(workshops.id, packs.workshopId))
		.where(and(eq(workshops.slug, slug), eq(packs.name, 'Cargo trike pack')));
	const [tech] = await db.select({ id: users.id }).from(users).where(eq(users.email, technicianEmail));
	if (!row || !tech) return;
	const groups = await db.select().from(packGroups).where(eq(packGroups.packId, row.packId)).orderBy(asc(packGroups.index));
	const rand = seeded(20261203);
	const second = new Date(now.getTime() - 2 * HOUR);
	const first = new Date(second.getTime() - 84 * HOUR);
	const values = groups.flatMap((g) => {
		// Volts per cell at rest the day after the charge; group 7 still sits below the others.
		const start = g.index === 7 ? 4.118 : 4.152 + Math.round(rand() * 6) / 1000;
		// 1–3 mV a day for the healthy groups, about 11 for group 7, over 3.5 days.
		const drop = g.index === 7 ? 0.038 : (4 + Math.round(rand() * 6)) / 1000;
		const base = { workshopId: row.workshopId, packId: row.packId, groupId: g.id, enteredBy: tech.id };
		return [
			{ ...base, id: newId(), volts: start, measuredAt: first },
			{ ...base, id: newId(), volts: Math.round((start - drop) * 1000) / 1000, measuredAt: second }
		];
	});
	if (values.length) await db.insert(voltageChecks).values(values);
}
