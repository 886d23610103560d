/**
 * The printable session report: what a workshop hands to the pack's owner with the pack. The
 * session as it was planned and as it ran (per step), its readings for the chart, its alerts with
 * their acknowledgements, and who did what (the audit trail, in words). Visibility is the
 * session's: getSession answers 404 for another workshop's session, or a viewer's who does not own
 * the pack. Every time stays a Date; the page shows it in the workshop's zone.
 */
import { and, asc, eq, sql } from 'drizzle-orm';
import { describeAuditEvent } from '$lib/audit-words';
import { formatSetVolts, formatVolts } from '$lib/run-words';
import { sessionKindLabels } from '$lib/session-plan';
import { listAlerts, type AlertListItem } from '../alerts/inbox';
import type { Member } from '../auth/permissions';
import { db } from '../db';
import { auditEvents, cellSpecs, packs, readings, type ChargeSession, type SessionStep } from '../db/schema';
import { getSession } from './core';
import { sessionSeries, type SeriesLine, type SeriesLimits } from './series';

const HOUR = 3_600_000;
/** Points per group line: enough for a chart a page wide, small enough to print fast. */
export const REPORT_CHART_POINTS = 300;

export type ReportStep = {
	position: number;
	/** null: the whole pack. */
	groupIndex: number | null;
	role: string;
	channelLabel: string;
	setVolts: number | null;
	amps: number | null;
	expectedStart: Date;
	expectedEnd: Date;
	expectedHours: number;
	expectedAh: number;
	actualStart: Date | null;
	actualEnd: Date | null;
	/** Start to end; for a step still running, null. */
	actualHours: number | null;
	status: SessionStep['status'];
};

/** An audit event in the audit page's words (audit-words.ts): "Step ended: step 3", ["Note: …"]. */
export type ReportActivity = { at: Date; who: string; title: string; details: string[] };

export type SessionReport = {
	workshop: { name: string; timeZone: string };
	session: {
		id: string;
		name: string;
		kind: ChargeSession['kind'];
		kindLabel: string;
		target: string;
		status: ChargeSession['status'];
		stopReason: string;
		plannedStart: Date;
		plannedEnd: Date | null;
		startedAt: Date | null;
		endedAt: Date | null;
		readingIntervalMinutes: number;
		readings: number;
	};
	pack: {
		id: string;
		name: string;
		/** "13S4P". */
		layout: string;
		chemistry: string;
		cellSpec: { name: string; capacityAh: number; maxChargeAmps: number };
		bmsFitted: boolean;
	};
	chargerName: string | null;
	/** On watch now (at the end: who had the watch last); hand-overs are in the activity. */
	watch: string | null;
	steps: ReportStep[];
	/** Oldest first. */
	alerts: AlertListItem[];
	/** Oldest first. */
	activity: ReportActivity[];
	chart: { volts: SeriesLine[]; limits: SeriesLimits; from: string | null; to: string | null };
};

/** What the session aimed for, in words. */
function targetWords(s: ChargeSession): string {
	if (s.target === 'storage') return 'storage charge';
	if (s.target === 'volts' && s.targetVolts !== null) return `${formatVolts(s.targetVolts)} per cell at rest`;
	const to = s.setVolts !== null ? ` (set ${formatSetVolts(s.setVolts)} per cell)` : '';
	return `full${to}`;
}

/** The report of one session the member may see (404 otherwise). */
export async function sessionReport(member: Member, sessionId: string): Promise<SessionReport> {
	const detail = await getSession(member, sessionId);
	const { session, pack } = detail;
	const [[spec], audits, alertList, series, [counted]] = await Promise.all([
		db
			.select({ name: cellSpecs.name, capacityAh: cellSpecs.capacityAh, maxChargeAmps: cellSpecs.maxChargeAmps })
			.from(packs)
			.innerJoin(cellSpecs, eq(cellSpecs.id, packs.cellSpecId))
			.where(eq(packs.id, pack.id)),
		db
			.select({
				at: auditEvents.at,
				actorLabel: auditEvents.actorLabel,
				kind: auditEvents.kind,
				subjectId: auditEvents.subjectId,
				before: auditEvents.before,
				after: auditEvents.after,
				readingGroupIndex: sql<number | null>`(
					select g.index from readings r join pack_groups g on g.id = r.group_id
					where ${auditEvents.subjectType} = 'reading' and r.id::text = ${auditEvents.subjectId}
				)`.mapWith((v: unknown) => (v === null || v === undefined ? null : Number(v)))
			})
			.from(auditEvents)
			.where(and(eq(auditEvents.sessionId, session.id), eq(auditEvents.workshopId, member.workshop.id)))
			.orderBy(asc(auditEvents.at), asc(auditEvents.id)),
		listAlerts(member, { sessionId: session.id, limit: 200 }),
		sessionSeries(member, session.id, REPORT_CHART_POINTS),
		db.select({ n: sql<number>`count(*)`.mapWith(Number) }).from(readings).where(eq(readings.sessionId, session.id))
	]);

	const indexOf = new Map(detail.groups.map((g) => [g.id, g.index]));
	const steps: ReportStep[] = detail.steps.map((s) => ({
		position: s.position,
		groupIndex: s.groupId === null ? null : (indexOf.get(s.groupId) ?? null),
		role: s.role,
		channelLabel: s.channelLabel,
		setVolts: s.setVolts,
		amps: s.amps,
		expectedStart: s.expectedStart,
		expectedEnd: s.expectedEnd,
		expectedHours: (s.expectedEnd.getTime() - s.expectedStart.getTime()) / HOUR,
		expectedAh: s.ah,
		actualStart: s.actualStart,
		actualEnd: s.actualEnd,
		actualHours: s.actualStart && s.actualEnd ? (s.actualEnd.getTime() - s.actualStart.getTime()) / HOUR : null,
		status: s.status
	}));
	const stepById = new Map(detail.steps.map((s, i) => [s.id, steps[i]]));
	const alertsOldestFirst = [...alertList].sort((a, b) => a.openedAt.getTime() - b.openedAt.getTime() || a.id.localeCompare(b.id));
	const alertTitle = new Map(alertsOldestFirst.map((a) => [a.id, a.title]));
	const activity: ReportActivity[] = audits.map((row) => {
		const words = describeAuditEvent(
			{
				kind: row.kind,
				before: row.before,
				after: row.after,
				alertTitle: row.kind === 'alert.acknowledge' ? (alertTitle.get(row.subjectId) ?? null) : undefined,
				groupIndex: row.kind === 'reading.edit' ? row.readingGroupIndex : undefined
			},
			member.workshop.timeZone
		);
		// A step's event names its group too: the owner reads groups, not step numbers.
		const step = row.kind.startsWith('step.') ? stepById.get(row.subjectId) : undefined;
		const title = step ? `${words.title} (${step.groupIndex === null ? 'whole pack' : `group ${step.groupIndex}`})` : words.title;
		return { at: row.at, who: row.actorLabel || 'someone', title, details: words.details };
	});

	return {
		workshop: { name: member.workshop.name, timeZone: member.workshop.timeZone },
		session: {
			id: session.id,
			name: session.name,
			kind: session.kind,
			kindLabel: sessionKindLabels[session.kind],
			target: targetWords(session),
			status: session.status,
			stopReason: session.stopReason,
			plannedStart: session.plannedStart,
			plannedEnd: session.plannedEnd,
			startedAt: session.startedAt,
			endedAt: session.endedAt,
			readingIntervalMinutes: session.readingIntervalMinutes,
			readings: counted?.n ?? 0
		},
		pack: {
			id: pack.id,
			name: pack.name,
			layout: `${pack.series}S${pack.parallel}P`,
			chemistry: pack.chemistry.name,
			cellSpec: { name: spec?.name ?? '', capacityAh: spec?.capacityAh ?? pack.cellCapacityAh, maxChargeAmps: spec?.maxChargeAmps ?? pack.cellMaxChargeAmps },
			bmsFitted: pack.bmsFitted
		},
		chargerName: detail.chargerName,
		watch: detail.watch?.name ?? null,
		steps,
		alerts: alertsOldestFirst,
		activity,
		chart: { volts: series.volts, limits: series.limits, from: series.from, to: series.to }
	};
}
