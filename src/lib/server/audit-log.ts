/**
 * The audit page's reading of the audit trail (written by sessions/audit.ts in each change's own
 * transaction): owners only, filtered by person, pack, session and kind of change, newest first a
 * page at a time (keyset on the event's time and id, so a page never repeats or skips a row when
 * new events arrive).
 */
import { error } from '@sveltejs/kit';
import { and, desc, eq, isNull, sql, type SQL } from 'drizzle-orm';
import { roleLabels } from '$lib/permissions';
import { AUDIT_PAGE_SIZE, type AuditQuery } from '$lib/schemas/audit-log';
import type { Member } from './auth/permissions';
import { db } from './db';
import { auditEvents, chargeSessions, packs, users } from './db/schema';

export type AuditRow = {
	id: number;
	at: Date;
	actorLabel: string;
	kind: string;
	packId: string | null;
	packName: string | null;
	sessionId: string | null;
	sessionName: string | null;
	subjectType: string;
	before: Record<string, unknown> | null;
	after: Record<string, unknown> | null;
	alertTitle: string | null;
	/** An edited reading's group; null for a whole-pack reading (undefined when not a reading, or it is gone). */
	groupIndex?: number | null;
};

export type AuditPage = {
	events: AuditRow[];
	/** The cursor of the next (older) page, or null at the end. */
	next: string | null;
};

export type AuditChoices = {
	people: { id: string; name: string }[];
	hasDevices: boolean;
	packs: { id: string; name: string }[];
	sessions: { id: string; name: string; packName: string; plannedStart: Date }[];
};

/** 403 in words for anyone but an owner. */
export function requireAuditReader(member: Member): void {
	if (member.role !== 'owner')
		error(403, `Only an owner can read the workshop's audit trail; a ${roleLabels[member.role].toLowerCase()} sees who did what on each session's page.`);
}

const micros = sql<string>`(extract(epoch from ${auditEvents.at}) * 1000000)::bigint::text`;

/** One page of the workshop's audit events, newest first, with the filters of `query`. One query. */
export async function listAuditEvents(member: Member, query: AuditQuery): Promise<AuditPage> {
	requireAuditReader(member);
	const where: SQL[] = [eq(auditEvents.workshopId, member.workshop.id)];
	if (query.person === 'device') where.push(isNull(auditEvents.actorId));
	else if (query.person) where.push(eq(auditEvents.actorId, query.person));
	if (query.pack) where.push(eq(auditEvents.packId, query.pack));
	if (query.session) where.push(eq(auditEvents.sessionId, query.session));
	if (query.kind) where.push(eq(auditEvents.kind, query.kind));
	if (query.before) {
		const [us, id] = query.before.split('.');
		where.push(sql`(${auditEvents.at}, ${auditEvents.id}) < ('epoch'::timestamptz + (${us} || ' microseconds')::interval, ${id}::bigint)`);
	}
	const rows = await db
		.select({
			id: auditEvents.id,
			at: auditEvents.at,
			micros,
			actorLabel: auditEvents.actorLabel,
			kind: auditEvents.kind,
			packId: auditEvents.packId,
			packName: packs.name,
			sessionId: auditEvents.sessionId,
			sessionName: chargeSessions.name,
			subjectType: auditEvents.subjectType,
			before: auditEvents.before,
			after: auditEvents.after,
			alertTitle: sql<string | null>`(select a.title from alerts a where ${auditEvents.subjectType} = 'alert' and a.id = ${auditEvents.subjectId})`,
			// -1: no such reading (not a reading, or deleted with its session); 0: the whole pack.
			readingGroup: sql<number>`coalesce((
				select coalesce(g.index, 0) from readings r left join pack_groups g on g.id = r.group_id
				where r.id = case when ${auditEvents.subjectType} = 'reading' and ${auditEvents.subjectId} ~ '^[0-9]{1,18}$' then ${auditEvents.subjectId}::bigint end
			), -1)`.mapWith(Number)
		})
		.from(auditEvents)
		.leftJoin(packs, and(eq(packs.id, auditEvents.packId), eq(packs.workshopId, auditEvents.workshopId)))
		.leftJoin(chargeSessions, and(eq(chargeSessions.id, auditEvents.sessionId), eq(chargeSessions.workshopId, auditEvents.workshopId)))
		.where(and(...where))
		.orderBy(desc(auditEvents.at), desc(auditEvents.id))
		.limit(AUDIT_PAGE_SIZE + 1);
	const page = rows.slice(0, AUDIT_PAGE_SIZE);
	const last = page[page.length - 1];
	return {
		events: page.map(({ micros: _, readingGroup, ...r }) => ({
			...r,
			...(readingGroup >= 0 ? { groupIndex: readingGroup === 0 ? null : readingGroup } : {})
		})),
		next: rows.length > AUDIT_PAGE_SIZE && last ? `${last.micros}.${last.id}` : null
	};
}

/** What the filters offer: everyone who changed something, the packs, and the sessions (of the chosen pack). */
export async function auditChoices(member: Member, packId?: string): Promise<AuditChoices> {
	requireAuditReader(member);
	const workshopId = member.workshop.id;
	const [actors, packRows, sessionRows] = await Promise.all([
		db
			.selectDistinctOn([auditEvents.actorId], { id: auditEvents.actorId, label: auditEvents.actorLabel, name: users.name })
			.from(auditEvents)
			.leftJoin(users, eq(users.id, auditEvents.actorId))
			.where(eq(auditEvents.workshopId, workshopId))
			.orderBy(auditEvents.actorId, desc(auditEvents.at)),
		db.select({ id: packs.id, name: packs.name }).from(packs).where(eq(packs.workshopId, workshopId)).orderBy(packs.name),
		db
			.select({ id: chargeSessions.id, name: chargeSessions.name, packName: packs.name, plannedStart: chargeSessions.plannedStart })
			.from(chargeSessions)
			.innerJoin(packs, eq(packs.id, chargeSessions.packId))
			.where(and(eq(chargeSessions.workshopId, workshopId), packId ? eq(chargeSessions.packId, packId) : undefined))
			.orderBy(desc(chargeSessions.plannedStart))
			.limit(200)
	]);
	return {
		people: actors
			.filter((a): a is typeof a & { id: string } => a.id !== null)
			.map((a) => ({ id: a.id, name: a.name ?? a.label }))
			.sort((a, b) => a.name.localeCompare(b.name)),
		hasDevices: actors.some((a) => a.id === null),
		packs: packRows,
		sessions: sessionRows
	};
}
