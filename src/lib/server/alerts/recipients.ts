/**
 * Who is told of a session's alerts, and how each person wants to be told (product.md, "Alerts").
 *
 * A session's default watchers are the workshop's owners, the builder who planned it (the
 * session's created_by), the technician on watch and the pack's owner-member. `session_watchers`
 * changes that list: a row with watching = true adds a member, watching = false takes a default
 * watcher off. The technician on watch is always told, whatever a row says — they are the one
 * who must act on a step finished or a reading due.
 *
 * A viewer sees only the packs they own, so a viewer is told only while they are the pack's owner:
 * an alert names the pack and its readings.
 */
import { and, eq, or, sql, type SQL } from 'drizzle-orm';
import { can, type Role } from '$lib/permissions';
import { requirePermission, type Member } from '../auth/permissions';
import { db, type Db, type Tx } from '../db';
import { chargeSessions, memberships, packs, sessionWatchers, users, workshops } from '../db/schema';
import { writeAudit } from '../sessions/audit';
import { conflict, invalid, notFound, type SessionFailure } from '../sessions/results';

export type WatchReason = 'owner' | 'planner' | 'on-watch' | 'pack-owner' | 'added';

export type Recipient = {
	userId: string;
	email: string;
	name: string;
	role: Role;
	/** The technician on watch: quiet time never holds an alert back from them. */
	onWatch: boolean;
	emailAlerts: boolean;
	pushAlerts: boolean;
	/** 'HH:MM' in the workshop's zone, both or neither. */
	quietFrom: string | null;
	quietTo: string | null;
	/** At least one push subscription (a device) for this person. */
	hasPushDevice: boolean;
	/** Why they are told, in the order owner, planner, on-watch, pack-owner, added. */
	reasons: WatchReason[];
};

type Q = Tx | Db;

/** A member's channels, quiet time and devices: the columns every recipient query reads. */
const personColumns = {
	userId: memberships.userId,
	email: users.email,
	name: users.name,
	role: memberships.role,
	emailAlerts: memberships.emailAlerts,
	pushAlerts: memberships.pushAlerts,
	quietFrom: memberships.quietFrom,
	quietTo: memberships.quietTo,
	hasPushDevice: sql<boolean>`exists (select 1 from push_subscriptions ps where ps.user_id = ${memberships.userId})`.mapWith(Boolean)
};

type PersonRow = {
	userId: string;
	email: string;
	name: string;
	role: Role;
	emailAlerts: boolean;
	pushAlerts: boolean;
	quietFrom: string | null;
	quietTo: string | null;
	hasPushDevice: boolean;
};

type CandidateRow = PersonRow & {
	createdBy: string | null;
	watchUserId: string | null;
	packOwnerId: string | null;
	/** The session_watchers row's choice, or null without one. */
	watching: boolean | null;
};

/** Why a member is a default watcher of the session (none: they are not one). */
function defaultReasons(row: Pick<CandidateRow, 'userId' | 'role' | 'createdBy' | 'watchUserId' | 'packOwnerId'>): WatchReason[] {
	const reasons: WatchReason[] = [];
	if (row.role === 'owner') reasons.push('owner');
	// A viewer cannot plan; created_by of someone since demoted to viewer no longer counts.
	if (row.userId === row.createdBy && can(row.role, 'plans.edit')) reasons.push('planner');
	if (row.userId === row.watchUserId) reasons.push('on-watch');
	if (row.userId === row.packOwnerId) reasons.push('pack-owner');
	return reasons;
}

/** The candidate's recipient entry, or null when they are not told. */
function resolve(row: CandidateRow): Recipient | null {
	const onWatch = row.userId === row.watchUserId;
	const reasons = defaultReasons(row);
	// A viewer sees only the packs they own: told only as the pack's owner.
	if (row.role === 'viewer' && row.userId !== row.packOwnerId) return null;
	if (!onWatch) {
		if (row.watching === false) return null;
		if (row.watching === true && !reasons.includes('added')) reasons.push('added');
		if (reasons.length === 0) return null;
	}
	const { createdBy: _c, watchUserId: _w, packOwnerId: _p, watching: _x, ...person } = row;
	return { ...person, onWatch, reasons };
}

/** Every member who could be told of the session: defaults and anyone with a watchers row. One query. */
async function candidates(q: Q, sessionId: string, workshopId?: string) {
	const where: SQL[] = [eq(chargeSessions.id, sessionId)];
	if (workshopId) where.push(eq(chargeSessions.workshopId, workshopId));
	return q
		.select({
			...personColumns,
			createdBy: chargeSessions.createdBy,
			watchUserId: chargeSessions.watchUserId,
			packOwnerId: packs.packOwnerId,
			watching: sessionWatchers.watching,
			timeZone: workshops.timeZone
		})
		.from(chargeSessions)
		.innerJoin(workshops, eq(workshops.id, chargeSessions.workshopId))
		.innerJoin(packs, eq(packs.id, chargeSessions.packId))
		.innerJoin(memberships, eq(memberships.workshopId, chargeSessions.workshopId))
		.innerJoin(users, eq(users.id, memberships.userId))
		.leftJoin(sessionWatchers, and(eq(sessionWatchers.sessionId, chargeSessions.id), eq(sessionWatchers.userId, memberships.userId)))
		.where(
			and(
				...where,
				or(
					eq(memberships.role, 'owner'),
					eq(memberships.userId, sql`${chargeSessions.createdBy}`),
					eq(memberships.userId, sql`${chargeSessions.watchUserId}`),
					eq(memberships.userId, sql`${packs.packOwnerId}`),
					sql`${sessionWatchers.userId} is not null`
				)
			)
		);
}

const byName = (a: Recipient, b: Recipient) => a.name.localeCompare(b.name) || a.userId.localeCompare(b.userId);

/**
 * The people told of the session's alerts, with their channels and quiet time, and the
 * workshop's time zone (quiet time is read in it). One query. Throws when there is no such
 * session (an alert always belongs to one).
 */
export async function sessionRecipients(tx: Q, sessionId: string): Promise<{ timeZone: string; recipients: Recipient[] }> {
	const rows = await candidates(tx, sessionId);
	// A workshop always keeps an owner (workshops-members.ts), so an existing session has a row.
	if (rows.length === 0) throw new Error(`sessionRecipients: no session ${sessionId}`);
	const recipients = rows.map(({ timeZone: _t, ...row }) => resolve(row)).filter((r): r is Recipient => r !== null);
	return { timeZone: rows[0].timeZone, recipients: recipients.sort(byName) };
}

/** Every owner of the workshop: where an unacknowledged critical alert escalates to. One query. */
export async function workshopOwners(tx: Q, workshopId: string): Promise<Recipient[]> {
	const rows: PersonRow[] = await tx
		.select(personColumns)
		.from(memberships)
		.innerJoin(users, eq(users.id, memberships.userId))
		.where(and(eq(memberships.workshopId, workshopId), eq(memberships.role, 'owner')));
	return rows.map((r) => ({ ...r, onWatch: false, reasons: ['owner' as const] })).sort(byName);
}

/** A watcher as the run screen shows it (no e-mail address: any member of the session may read it). */
export type WatcherView = { userId: string; name: string; role: Role; onWatch: boolean; reasons: WatchReason[] };

export type WatchersResult = { ok: true; watchers: WatcherView[] } | SessionFailure;

const view = (r: Recipient): WatcherView => ({ userId: r.userId, name: r.name, role: r.role, onWatch: r.onWatch, reasons: r.reasons });

/** The session's pack owner, if the member may see the session at all (the same rule as getSession). */
async function visibleSession(q: Q, member: Member, sessionId: string, lock: boolean) {
	const query = q
		.select({
			id: chargeSessions.id,
			packId: chargeSessions.packId,
			createdBy: chargeSessions.createdBy,
			watchUserId: chargeSessions.watchUserId,
			packOwnerId: packs.packOwnerId
		})
		.from(chargeSessions)
		.innerJoin(packs, eq(packs.id, chargeSessions.packId))
		.where(and(eq(chargeSessions.id, sessionId), eq(chargeSessions.workshopId, member.workshop.id)));
	const [row] = lock ? await query.for('update', { of: chargeSessions }) : await query;
	if (!row) return null;
	if (!can(member.role, 'packs.viewAll') && row.packOwnerId !== member.user.id) return null;
	return row;
}

async function watchersOf(q: Q, member: Member, sessionId: string): Promise<WatcherView[]> {
	const rows = await candidates(q, sessionId, member.workshop.id);
	return rows
		.map(({ timeZone: _t, ...row }) => resolve(row))
		.filter((r): r is Recipient => r !== null)
		.sort(byName)
		.map(view);
}

/** Who is told of the session's alerts and why (sessions.view; 404 when the member may not see it). */
export async function listWatchers(member: Member, sessionId: string): Promise<WatchersResult> {
	requirePermission(member, 'sessions.view');
	if (!(await visibleSession(db, member, sessionId, false))) return notFound();
	return { ok: true, watchers: await watchersOf(db, member, sessionId) };
}

/**
 * Adds a member to the session's watchers (watching = true) or takes one off (false), for those
 * who may plan sessions (plans.edit). Adding back a default watcher who was taken off restores
 * the default (their row goes). The technician on watch cannot be taken off (409); a person who
 * is not a member, or a viewer who does not own the pack, cannot be added (400). One transaction
 * that locks the session row; the change is written to the audit trail.
 */
export async function setWatcher(member: Member, sessionId: string, userId: string, watching: boolean): Promise<WatchersResult> {
	requirePermission(member, 'plans.edit');
	return db.transaction(async (tx) => {
		const session = await visibleSession(tx, member, sessionId, true);
		if (!session) return notFound();
		const [target] = await tx
			.select({ name: users.name, role: memberships.role, watching: sessionWatchers.watching })
			.from(memberships)
			.innerJoin(users, eq(users.id, memberships.userId))
			.leftJoin(sessionWatchers, and(eq(sessionWatchers.sessionId, sessionId), eq(sessionWatchers.userId, memberships.userId)))
			.where(and(eq(memberships.workshopId, member.workshop.id), eq(memberships.userId, userId)));
		if (!target) return invalid('Choose a member of this workshop.', 'userId', 'not-a-member');
		if (!watching && userId === session.watchUserId) {
			return conflict(
				`${target.name} is the technician on watch and is always told of this session's alerts while on watch. Hand the watch to someone else first.`,
				'on-watch'
			);
		}
		if (watching && target.role === 'viewer' && userId !== session.packOwnerId) {
			return invalid(`${target.name} is a viewer and sees only the packs they own, so they cannot watch this session.`, 'userId', 'cannot-see');
		}
		const before = await watchersOf(tx, member, sessionId);
		const wasWatching = before.some((w) => w.userId === userId);
		const isDefault = defaultReasons({ ...session, userId, role: target.role }).length > 0;
		// Adding a default watcher back removes the row that took them off; anything else is stored.
		const nextRow: boolean | null = watching && isDefault ? null : watching;
		if (nextRow === target.watching) return { ok: true, watchers: before };
		if (nextRow === null) {
			await tx.delete(sessionWatchers).where(and(eq(sessionWatchers.sessionId, sessionId), eq(sessionWatchers.userId, userId)));
		} else {
			const values = { sessionId, workshopId: member.workshop.id, userId, watching: nextRow, changedBy: member.user.id, changedAt: new Date() };
			await tx
				.insert(sessionWatchers)
				.values(values)
				.onConflictDoUpdate({ target: [sessionWatchers.sessionId, sessionWatchers.userId], set: { watching: nextRow, changedBy: member.user.id, changedAt: values.changedAt } });
		}
		const watchers = await watchersOf(tx, member, sessionId);
		const isWatching = watchers.some((w) => w.userId === userId);
		await writeAudit(tx, {
			workshopId: member.workshop.id,
			actorId: member.user.id,
			actorLabel: member.user.name,
			kind: 'watchers.change',
			packId: session.packId,
			sessionId,
			subjectType: 'session',
			subjectId: sessionId,
			before: { userId, name: target.name, watching: wasWatching },
			after: { userId, name: target.name, watching: isWatching }
		});
		return { ok: true, watchers };
	});
}

export type WatcherPanel = {
	watchers: WatcherView[];
	/** Members the asking member may add (empty unless they may plan sessions). */
	addable: { userId: string; name: string; role: Role }[];
	canChange: boolean;
};

/** The run screen's watchers card: the list, and who could be added (the page has checked the session). */
export async function watcherPanel(member: Member, sessionId: string): Promise<WatcherPanel> {
	requirePermission(member, 'sessions.view');
	const session = await visibleSession(db, member, sessionId, false);
	if (!session) return { watchers: [], addable: [], canChange: false };
	const canChange = can(member.role, 'plans.edit');
	const [watchers, people] = await Promise.all([
		watchersOf(db, member, sessionId),
		canChange
			? db
					.select({ userId: memberships.userId, name: users.name, role: memberships.role })
					.from(memberships)
					.innerJoin(users, eq(users.id, memberships.userId))
					.where(eq(memberships.workshopId, member.workshop.id))
					.orderBy(users.name)
			: Promise.resolve([])
	]);
	const watching = new Set(watchers.map((w) => w.userId));
	const addable = people.filter((p) => !watching.has(p.userId) && (p.role !== 'viewer' || p.userId === session.packOwnerId));
	return { watchers, addable, canChange };
}
