/**
 * The demo workshop (shared docs: demo-scenario.md) — invented data for trying Cellsitter out,
 * loaded by `npm start` into an empty database. Never a test's check value.
 */
import { count } from 'drizzle-orm';
import type { Role } from '$lib/permissions';
import { db } from './db';
import { memberships, users, workshops } from './db/schema';
import { hashPassword } from './auth/passwords';
import { newId } from './ids';

export const demoWorkshop = { name: 'Larkfield Battery Bench', slug: 'larkfield', timeZone: 'Europe/London' };

export const demoPeople: { email: string; name: string; role: Role }[] = [
	{ email: 'owner@larkfield.test', name: 'Morgan Reed', role: 'owner' },
	{ email: 'builder@larkfield.test', name: 'Sam Okafor', role: 'builder' },
	{ email: 'technician@larkfield.test', name: 'Priya Nandakumar', role: 'technician' },
	{ email: 'viewer@larkfield.test', name: 'Jonah Birch', role: 'viewer' }
];

/** Loads the demo workshop when there is no workshop yet; returns whether it did. */
export async function loadDemoIfEmpty(password: string): Promise<boolean> {
	const [{ n }] = await db.select({ n: count() }).from(workshops);
	if (n > 0) return false;
	const passwordHash = await hashPassword(password);
	await db.transaction(async (tx) => {
		const workshopId = newId();
		await tx.insert(workshops).values({ id: workshopId, ...demoWorkshop });
		for (const person of demoPeople) {
			const userId = newId();
			await tx.insert(users).values({ id: userId, email: person.email, name: person.name, passwordHash });
			await tx.insert(memberships).values({ workshopId, userId, role: person.role });
		}
	});
	return true;
}
