/**
 * A session to log readings into, written straight into the tables (so these tests do not depend
 * on the planner): a pack from packFixture, a running session, one step per group with group 1's
 * step running since an hour ago.
 */
import { randomUUID } from 'node:crypto';
import { asc, eq } from 'drizzle-orm';
import type { Member } from '$lib/server/auth/permissions';
import { db } from '$lib/server/db';
import { chargeSessions, packGroups, sessionSteps, type ChargeSession } from '$lib/server/db/schema';
import { newId } from '$lib/server/ids';
import { packFixture } from './helpers';

export async function sessionFixture(opts: { series?: number; status?: ChargeSession['status'] } = {}) {
	const { owner, pack } = await packFixture({ series: opts.series ?? 4, parallel: 2 });
	const groups = await db.select().from(packGroups).where(eq(packGroups.packId, pack.id)).orderBy(asc(packGroups.index));
	const session = await addSession(owner, pack.id, opts.status ?? 'running');
	const hour = 3_600_000;
	const start = Date.now() - hour;
	const steps = groups.map((g, i) => ({
		id: newId(),
		sessionId: session.id,
		position: i + 1,
		groupId: g.id,
		channelLabel: 'Channel 1',
		setVolts: 4.2,
		amps: 2,
		expectedStart: new Date(start + i * 2 * hour),
		expectedEnd: new Date(start + (i + 1) * 2 * hour),
		actualStart: i === 0 ? new Date(start) : null,
		status: i === 0 ? ('running' as const) : ('waiting' as const)
	}));
	await db.insert(sessionSteps).values(steps);
	return { owner, pack, groups, session, steps, ws: owner.workshop.slug };
}

/** Another session of the same pack (e.g. to check that a token of one cannot write to the other). */
export async function addSession(owner: Member, packId: string, status: ChargeSession['status'] = 'running') {
	const [session] = await db
		.insert(chargeSessions)
		.values({
			id: newId(),
			workshopId: owner.workshop.id,
			packId,
			name: `Readings ${randomUUID().slice(0, 6)}`,
			kind: 'one-at-a-time',
			plannedStart: new Date(Date.now() - 3_600_000),
			handsOn: { daily: [{ from: '07:00', to: '23:00' }], once: [] },
			limits: {},
			status,
			startedAt: status === 'running' ? new Date(Date.now() - 3_600_000) : null,
			createdBy: owner.user.id,
			updatedBy: owner.user.id
		})
		.returning();
	return session;
}
