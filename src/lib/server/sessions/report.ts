/**
 * The printable session report: what a workshop hands to the pack's owner with the pack. The
 * session as it was planned and as it ran (per step), its readings for the chart, its alerts with
 * their acknowledgements, and who did what (the audit trail, in words). Visibility is the
 * session's: getSession answers 404 for another workshop's session, or a viewer's who does not own
 * the pack. Every time stays a Date; the page shows it in the workshop's zone.
 */
import { and, asc, eq, sql } from 'drizzle-orm';
import { formatSetVolts, formatVolts, groupName } from '$lib/run-words';
import { sessionKindLabels } from '$lib/session-plan';
import type { Member } from '../auth/permissions';
import { listAlerts, type AlertListItem } from '../alerts/inbox';
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

export type ReportActivity = { at: Date; who: string; text: string };

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

const stepRoleWords: Record<string, string> = {
	charge: 'charge',
	'top-up': 'top-up',
	balance: 'BMS balance',
	bleed: 'bleed',
	rest: 'rest'
};

function stepName(step: { position: number; groupIndex: number | null; role: string } | undefined): string {
	if (!step) return 'a step';
	return `step ${step.position} (${stepRoleWords[step.role] ?? step.role}, ${groupName(step.groupIndex)})`;
}

const readingFieldWords: Record<string, { label: string; unit: string }> = {
	volts: { label: 'volts', unit: 'V' },
	amps: { label: 'current', unit: 'A' },
	tempC: { label: 'temperature', unit: '°C' },
	ambientC: { label: 'ambient', unit: '°C' },
	takenAt: { label: 'time', unit: '' },
	note: { label: 'note', unit: '' }
};

function valueWords(v: unknown, unit: string): string {
	if (v === null || v === undefined || v === '') return 'none';
	if (typeof v === 'number') return unit ? `${v}\u2009${unit}` : String(v);
	return `“${String(v)}”`;
}

type AuditRow = {
	at: Date;
	actorLabel: string;
	kind: string;
	subjectId: string;
	before: Record<string, unknown> | null;
	after: Record<string, unknown> | null;
	readingGroupIndex: number | null;
};

/**
 * One audit event in words: "started step 3 (charge, group 7)". `stepOf` and `alertOf` name the
 * subject by id; an unknown kind is named as it is stored rather than left out.
 */
export function activityText(
	row: AuditRow,
	stepOf: (id: string) => ReportStep | undefined,
	alertOf: (id: string) => AlertListItem | undefined
): string {
	const after = row.after ?? {};
	const before = row.before ?? {};
	switch (row.kind) {
		case 'session.create':
			return 'planned the session';
		case 'session.update':
			return 'changed the plan';
		case 'session.start':
			return 'started the session';
		case 'session.pause':
			return 'paused the session';
		case 'session.resume':
			return 'resumed the session';
		case 'session.stop':
			return typeof after.reason === 'string' && after.reason ? `stopped the session: “${after.reason}”` : 'stopped the session';
		case 'session.done':
			return 'ended the session (every step done)';
		case 'watch.handover': {
			const to = typeof after.watchName === 'string' && after.watchName ? after.watchName : null;
			return to ? `handed the watch to ${to}` : 'left nobody named on watch';
		}
		case 'step.start':
			return `started ${stepName(stepOf(row.subjectId))}`;
		case 'step.done':
			return `finished ${stepName(stepOf(row.subjectId))}`;
		case 'step.skip':
			return `skipped ${stepName(stepOf(row.subjectId))}`;
		case 'reading.edit': {
			const changes = Object.keys(after).map((key) => {
				const words = readingFieldWords[key] ?? { label: key, unit: '' };
				return `${words.label} ${valueWords(before[key], words.unit)} → ${valueWords(after[key], words.unit)}`;
			});
			const of = row.readingGroupIndex === null ? 'a reading' : `a reading of ${groupName(row.readingGroupIndex)}`;
			return `corrected ${of}${changes.length ? `: ${changes.join(', ')}` : ''}`;
		}
		case 'device-token.issue':
			return `let a data logger post readings${typeof after.name === 'string' ? ` (“${after.name}”)` : ''}`;
		case 'device-token.revoke':
			return 'withdrew a data logger’s key';
		case 'alert.acknowledge': {
			const alert = alertOf(row.subjectId);
			const what = alert ? `the alert “${alert.title}”` : 'an alert';
			const note = typeof after.ackNote === 'string' ? after.ackNote : typeof after.note === 'string' ? after.note : '';
			return `acknowledged ${what}${note ? `: “${note}”` : ''}`;
		}
		case 'watchers.change': {
			const name = typeof after.name === 'string' ? after.name : 'someone';
			return after.watching ? `added ${name} to the people told of alerts` : `took ${name} off the people told of alerts`;
		}
		default:
			return `changed something (${row.kind})`;
	}
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
	const alertById = new Map(alertsOldestFirst.map((a) => [a.id, a]));
	const activity = audits.map((row) => ({
		at: row.at,
		who: row.actorLabel || 'someone',
		text: activityText(row, (id) => stepById.get(id), (id) => alertById.get(id))
	}));

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
