/**
 * The alerts people see and acknowledge: the workshop's inbox (needing attention first, then by
 * severity, newest first), one alert with its deliveries, the acknowledgement, and the summary
 * the workshop layout shows on every page (the red strip of a critical alert, the Alerts tab's
 * count). Visibility is the sessions' rule: a viewer sees only the alerts of packs they own.
 * Who may acknowledge is whoever may run a session (owner, builder, technician: alerts.acknowledge).
 *
 * An alert is active while cleared_at is null (the condition still holds) and needs attention
 * while acknowledged_at is null. The rows are raised elsewhere (alerts/raise.ts).
 */
import { and, asc, desc, eq, isNotNull, isNull, lt, sql, type SQL } from 'drizzle-orm';
import { can } from '$lib/permissions';
import { formatClock } from '$lib/run-words';
import { requirePermission, type Member } from '../auth/permissions';
import { db, type Db, type Tx } from '../db';
import {
	alertDeliveries,
	alerts,
	chargeSessions,
	packGroups,
	packs,
	readings,
	users,
	type AlertDelivery,
	type DeliveryAttempt,
	type StoredAlertKind
} from '../db/schema';
import { writeAudit } from '../sessions/audit';
import { notifySession } from '../sessions/notify';

export type AlertSeverity = 'info' | 'warning' | 'critical';

export type AlertListItem = {
	id: string;
	kind: StoredAlertKind;
	severity: AlertSeverity;
	title: string;
	message: string;
	action: string;
	value: number | null;
	threshold: number | null;
	unit: string;
	sessionId: string;
	sessionName: string;
	packId: string;
	packName: string;
	/** The group's number in the pack (G7 → 7); null for the whole session. */
	groupIndex: number | null;
	openedAt: Date;
	lastSeenAt: Date;
	/** Set once the condition is gone; null while it is active. */
	clearedAt: Date | null;
	acknowledgedAt: Date | null;
	acknowledgedBy: { id: string | null; name: string } | null;
	ackNote: string;
	escalatedAt: Date | null;
};

export type AlertDeliveryView = {
	id: string;
	/** The person (their name only: the page is seen by every member who sees the alert). */
	userName: string;
	channel: AlertDelivery['channel'];
	reason: AlertDelivery['reason'];
	status: AlertDelivery['status'];
	attempts: number;
	log: DeliveryAttempt[];
	createdAt: Date;
	lastAttemptAt: Date | null;
	sentAt: Date | null;
};

export type AlertDetail = AlertListItem & {
	/** The reading that raised it, when a reading did (volts as logged: per cell for a group, the pack's for the whole pack). */
	reading: {
		id: number;
		takenAt: Date;
		groupIndex: number | null;
		volts: number | null;
		amps: number | null;
		tempC: number | null;
		ambientC: number | null;
	} | null;
	details: Record<string, unknown>;
	deliveries: AlertDeliveryView[];
	canAcknowledge: boolean;
};

export type AlertListOptions = {
	/** open: needing attention; acknowledged: done with; all (the default): both, needing attention first. */
	status?: 'open' | 'acknowledged' | 'all';
	sessionId?: string;
	/** 1–200, 50 by default. */
	limit?: number;
	/** Only alerts opened before this time (the next page of a list). */
	before?: Date;
};

const itemColumns = {
	id: alerts.id,
	kind: alerts.kind,
	severity: alerts.severity,
	title: alerts.title,
	message: alerts.message,
	action: alerts.action,
	value: alerts.value,
	threshold: alerts.threshold,
	unit: alerts.unit,
	sessionId: alerts.sessionId,
	sessionName: chargeSessions.name,
	packId: alerts.packId,
	packName: packs.name,
	groupIndex: packGroups.index,
	openedAt: alerts.openedAt,
	lastSeenAt: alerts.lastSeenAt,
	clearedAt: alerts.clearedAt,
	acknowledgedAt: alerts.acknowledgedAt,
	acknowledgedById: alerts.acknowledgedBy,
	acknowledgedByName: sql<string | null>`(select u.name from users u where u.id = ${alerts.acknowledgedBy})`,
	ackNote: alerts.ackNote,
	escalatedAt: alerts.escalatedAt
};
type ItemRow = Awaited<ReturnType<typeof selectItems>>[number];

function toItem({ acknowledgedById, acknowledgedByName, ...rest }: ItemRow): AlertListItem {
	return {
		...rest,
		acknowledgedBy: rest.acknowledgedAt ? { id: acknowledgedById, name: acknowledgedByName ?? 'someone who has left' } : null
	};
}

/** The member's visible alerts: their workshop's, and only their own packs' for a viewer. */
function visibleTo(member: Member): SQL[] {
	const where: SQL[] = [eq(alerts.workshopId, member.workshop.id)];
	if (!can(member.role, 'packs.viewAll')) where.push(eq(packs.packOwnerId, member.user.id));
	return where;
}

function selectItems(tx: Db | Tx) {
	return tx
		.select(itemColumns)
		.from(alerts)
		.innerJoin(packs, eq(packs.id, alerts.packId))
		.innerJoin(chargeSessions, eq(chargeSessions.id, alerts.sessionId))
		.leftJoin(packGroups, eq(packGroups.id, alerts.groupId));
}

/**
 * The member's alerts in one query: needing attention first, then critical, warning, information,
 * then newest first. A viewer sees only the alerts of packs they own.
 */
export async function listAlerts(member: Member, options: AlertListOptions = {}): Promise<AlertListItem[]> {
	requirePermission(member, 'alerts.view');
	const where = visibleTo(member);
	const status = options.status ?? 'all';
	if (status === 'open') where.push(isNull(alerts.acknowledgedAt));
	if (status === 'acknowledged') where.push(isNotNull(alerts.acknowledgedAt));
	if (options.sessionId) where.push(eq(alerts.sessionId, options.sessionId));
	if (options.before) where.push(lt(alerts.openedAt, options.before));
	const limit = Math.min(Math.max(1, Math.floor(options.limit ?? 50)), 200);
	const rows = await selectItems(db)
		.where(and(...where))
		.orderBy(
			desc(sql`${alerts.acknowledgedAt} is null`),
			// The enum's order is info < warning < critical.
			desc(alerts.severity),
			desc(alerts.openedAt),
			desc(alerts.id)
		)
		.limit(limit);
	return rows.map(toItem);
}

/** One alert the member may see, with the reading behind it and its deliveries; null when there is none. */
export async function getAlert(member: Member, alertId: string): Promise<AlertDetail | null> {
	requirePermission(member, 'alerts.view');
	const [row] = await selectItems(db)
		.where(and(eq(alerts.id, alertId), ...visibleTo(member)))
		.limit(1);
	if (!row) return null;
	const [extra, deliveries] = await Promise.all([
		db
			.select({
				details: alerts.details,
				readingId: readings.id,
				takenAt: readings.takenAt,
				readingGroupIndex: sql<number | null>`(select g.index from pack_groups g where g.id = ${readings.groupId})`,
				volts: readings.volts,
				amps: readings.amps,
				tempC: readings.tempC,
				ambientC: readings.ambientC
			})
			.from(alerts)
			.leftJoin(readings, eq(readings.id, alerts.readingId))
			.where(eq(alerts.id, alertId)),
		db
			.select({
				id: alertDeliveries.id,
				userName: users.name,
				channel: alertDeliveries.channel,
				reason: alertDeliveries.reason,
				status: alertDeliveries.status,
				attempts: alertDeliveries.attempts,
				log: alertDeliveries.log,
				createdAt: alertDeliveries.createdAt,
				lastAttemptAt: alertDeliveries.lastAttemptAt,
				sentAt: alertDeliveries.sentAt
			})
			.from(alertDeliveries)
			.innerJoin(users, eq(users.id, alertDeliveries.userId))
			.where(eq(alertDeliveries.alertId, alertId))
			.orderBy(asc(alertDeliveries.createdAt), asc(users.name), asc(alertDeliveries.channel))
	]);
	const e = extra[0];
	return {
		...toItem(row),
		details: e?.details ?? {},
		reading:
			e && e.readingId !== null && e.takenAt
				? {
						id: e.readingId,
						takenAt: e.takenAt,
						groupIndex: e.readingGroupIndex === null ? null : Number(e.readingGroupIndex),
						volts: e.volts,
						amps: e.amps,
						tempC: e.tempC,
						ambientC: e.ambientC
					}
				: null,
		deliveries,
		canAcknowledge: can(member.role, 'alerts.acknowledge')
	};
}

export type AcknowledgeResult =
	| { ok: true; alert: AlertListItem }
	| {
			ok: false;
			status: 404 | 409;
			message: string;
			reason: 'not-found' | 'already-acknowledged';
			/** For a 409: who acknowledged it, and when. */
			acknowledged?: { by: string; at: Date };
	  };

/**
 * Acknowledges an alert (alerts.acknowledge: a viewer gets 403), with an optional note that has
 * passed alertAckSchema. One transaction: the alert row locked for update, refused (409, naming
 * who and when) once acknowledged, then the acknowledgement, its audit event and the session's
 * live notice. Two people acknowledging at once: one succeeds, the other is told who did.
 */
export async function acknowledgeAlert(member: Member, alertId: string, note = ''): Promise<AcknowledgeResult> {
	requirePermission(member, 'alerts.acknowledge');
	return db.transaction(async (tx) => {
		const [locked] = await tx
			.select({
				id: alerts.id,
				workshopId: alerts.workshopId,
				packId: alerts.packId,
				sessionId: alerts.sessionId,
				acknowledgedAt: alerts.acknowledgedAt,
				acknowledgedBy: alerts.acknowledgedBy,
				ackNote: alerts.ackNote
			})
			.from(alerts)
			.where(and(eq(alerts.id, alertId), eq(alerts.workshopId, member.workshop.id)))
			.for('update');
		if (!locked) return notFound;
		const [pack] = await tx.select({ packOwnerId: packs.packOwnerId }).from(packs).where(eq(packs.id, locked.packId));
		if (!pack || (!can(member.role, 'packs.viewAll') && pack.packOwnerId !== member.user.id)) return notFound;

		if (locked.acknowledgedAt) {
			const [by] = locked.acknowledgedBy
				? await tx.select({ name: users.name }).from(users).where(eq(users.id, locked.acknowledgedBy))
				: [];
			const who = locked.acknowledgedBy === member.user.id ? 'you' : (by?.name ?? 'someone who has left the workshop');
			const when = formatClock(locked.acknowledgedAt, new Date(), member.workshop.timeZone);
			return {
				ok: false as const,
				status: 409 as const,
				reason: 'already-acknowledged' as const,
				message: `This alert was already acknowledged by ${who} at ${when}.`,
				acknowledged: { by: by?.name ?? '', at: locked.acknowledgedAt }
			};
		}

		const [updated] = await tx
			.update(alerts)
			.set({ acknowledgedAt: sql`now()`, acknowledgedBy: member.user.id, ackNote: note })
			.where(eq(alerts.id, alertId))
			.returning({ acknowledgedAt: alerts.acknowledgedAt });
		await writeAudit(tx, {
			workshopId: member.workshop.id,
			actorId: member.user.id,
			actorLabel: member.user.name,
			kind: 'alert.acknowledge',
			packId: locked.packId,
			sessionId: locked.sessionId,
			subjectType: 'alert',
			subjectId: alertId,
			before: { acknowledgedAt: null, acknowledgedBy: null, ackNote: locked.ackNote },
			after: { acknowledgedAt: updated.acknowledgedAt?.toISOString() ?? null, acknowledgedBy: member.user.id, ackNote: note }
		});
		await notifySession(tx, { sessionId: locked.sessionId, workshopId: locked.workshopId, kind: 'alert' });
		const [row] = await selectItems(tx).where(eq(alerts.id, alertId));
		return { ok: true as const, alert: toItem(row) };
	});
}

const notFound = { ok: false as const, status: 404 as const, message: 'Not found', reason: 'not-found' as const };

export type AlertSummary = {
	/** Alerts the member can see that nobody has acknowledged yet. */
	needAttention: number;
	/** The newest critical ones among them (at most 3), for the red strip: what it is and what to do. */
	critical: { id: string; title: string; action: string; sessionId: string }[];
};

/** The first sentence of an action, for the red strip's few words. */
function firstSentence(text: string): string {
	const cut = text.search(/[.;](\s|$)/);
	return (cut >= 0 ? text.slice(0, cut + 1) : text).trim();
}

/**
 * What the workshop layout shows on every page, in one query over alerts_unacknowledged_idx
 * (the partial index of alerts needing attention, by workshop and severity).
 */
export async function alertSummary(member: Member): Promise<AlertSummary> {
	if (!can(member.role, 'alerts.view')) return { needAttention: 0, critical: [] };
	const ownOnly = !can(member.role, 'packs.viewAll');
	const [row] = (await db.execute(sql`
		select count(*)::int as need,
			coalesce((array_agg(json_build_object('id', a.id, 'title', a.title, 'action', a.action, 'sessionId', a.session_id)
				order by a.opened_at desc) filter (where a.severity = 'critical'))[1:3], '{}') as critical
		from alerts a
		${ownOnly ? sql`join packs p on p.id = a.pack_id and p.pack_owner_id = ${member.user.id}` : sql``}
		where a.workshop_id = ${member.workshop.id} and a.acknowledged_at is null
	`)) as unknown as { need: number; critical: { id: string; title: string; action: string; sessionId: string }[] }[];
	return {
		needAttention: Number(row?.need ?? 0),
		critical: (row?.critical ?? []).map((c) => ({ ...c, action: firstSentence(c.action) }))
	};
}
