/**
 * The demo workshop (shared docs: demo-scenario.md) — invented data for trying Cellsitter out,
 * loaded by `npm start` into an empty database. Never a test's check value.
 */
import { count } from 'drizzle-orm';
import type { Role } from '$lib/permissions';
import { db } from '../db';
import { memberships, users, workshops } from '../db/schema';
import { hashPassword } from '../auth/passwords';
import { newId } from '../ids';
import { loadDemoChargers } from './chargers';
import { loadDemoPacks } from './packs';
import { loadDemoSessions } from './sessions';
import { loadDemoSelfDischarge } from './self-discharge';

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
		const ids = Object.fromEntries(demoPeople.map((p) => [p.role, newId()])) as Record<Role, string>;
		await tx.insert(users).values(demoPeople.map((p) => ({ id: ids[p.role], email: p.email, name: p.name, passwordHash })));
		await tx.insert(memberships).values(demoPeople.map((p) => ({ workshopId, userId: ids[p.role], role: p.role })));
		await loadDemoPacks(tx, workshopId, ids);
		await loadDemoChargers(tx, workshopId, ids.builder);
	});
	// After the commit: sessions are planned through createSession, which opens its own transaction.
	const email = (role: Role) => demoPeople.find((p) => p.role === role)!.email;
	try {
		await loadDemoSessions(demoWorkshop.slug, { builder: email('builder'), technician: email('technician') });
	} catch (e) {
		console.error('The demo workshop loaded without its charge sessions:', e);
	}
	try {
		await loadDemoSelfDischarge(demoWorkshop.slug, email('technician'));
	} catch (e) {
		console.error('The demo workshop loaded without its self-discharge check:', e);
	}
	return true;
}
