/**
 * The rows of each export, as CSV text: a session's readings, a pack's cells, the alert log, and
 * for the workshop's zip its packs, sessions, steps and audit trail. Each verb takes the member
 * and checks what they may see itself (a viewer: only the packs they own).
 */
import { and, asc, desc, eq, inArray, type SQL } from 'drizzle-orm';
import { alias } from 'drizzle-orm/pg-core';
import { error } from '@sveltejs/kit';
import { can, roleLabels } from '$lib/permissions';
import { requirePermission, type Member } from '../auth/permissions';
import { listBatch, type Batch } from '../cells';
import { db } from '../db';
import { alerts, auditEvents, cells, chargeSessions, deviceTokens, packGroups, packs, readings, sessionSteps, users, voltageChecks } from '../db/schema';
import { getSession } from '../sessions/core';
import { fileNamePart, toCsv, type CsvValue } from './csv';

export type CsvFile = { fileName: string; csv: string };

/**
 * The readings' columns. The first seven are the ones the logger upload maps (time, group, volts,
 * amps, cell and room temperature, note), so an export imports back to the same readings; volts
 * are per cell for a group and the pack's for a whole-pack row, as the upload reads them.
 * volts_per_cell_V is the same per cell for every row (a pack's volts ÷ the groups in series).
 */
export const READING_COLUMNS = [
	'taken_at',
	'group',
	'volts_V',
	'amps_A',
	'temp_C',
	'ambient_C',
	'note',
	'volts_per_cell_V',
	'step',
	'source',
	'entered_by',
	'edited_at',
	'reading_id'
] as const;

const enteredBy = alias(users, 'entered_by_user');

/** One query: a session's readings in time order, with group, step and who entered them. */
async function readingRows(sessionId: string, series: number): Promise<CsvValue[][]> {
	const rows = await db
		.select({
			id: readings.id,
			takenAt: readings.takenAt,
			groupIndex: packGroups.index,
			volts: readings.volts,
			amps: readings.amps,
			tempC: readings.tempC,
			ambientC: readings.ambientC,
			note: readings.note,
			stepPosition: sessionSteps.position,
			source: readings.source,
			person: enteredBy.name,
			device: deviceTokens.name,
			editedAt: readings.editedAt
		})
		.from(readings)
		.leftJoin(packGroups, eq(packGroups.id, readings.groupId))
		.leftJoin(sessionSteps, eq(sessionSteps.id, readings.stepId))
		.leftJoin(enteredBy, eq(enteredBy.id, readings.enteredBy))
		.leftJoin(deviceTokens, eq(deviceTokens.id, readings.deviceTokenId))
		.where(eq(readings.sessionId, sessionId))
		.orderBy(asc(readings.takenAt), asc(packGroups.index), asc(readings.id));
	return rows.map((r) => [
		r.takenAt,
		r.groupIndex ?? 'pack',
		r.volts,
		r.amps,
		r.tempC,
		r.ambientC,
		r.note,
		r.volts === null ? null : r.groupIndex === null ? Math.round((r.volts / series) * 1e6) / 1e6 : r.volts,
		r.stepPosition,
		r.source,
		r.device ? `logger ${r.device}` : r.person,
		r.editedAt,
		r.id
	]);
}

function sessionFileName(s: { name: string; plannedStart: Date; id: string }, packName: string): string {
	return `readings-${fileNamePart(packName)}-${fileNamePart(s.name || 'session')}-${s.plannedStart.toISOString().slice(0, 10)}-${s.id.slice(0, 8)}.csv`;
}

/** A session's readings (whoever may see the session; 404 otherwise). */
export async function sessionReadingsCsv(member: Member, sessionId: string): Promise<CsvFile> {
	const detail = await getSession(member, sessionId);
	const rows = await readingRows(sessionId, detail.pack.series);
	return { fileName: sessionFileName(detail.session, detail.pack.name), csv: toCsv(READING_COLUMNS, rows, member.workshop.timeZone) };
}

export const CELL_COLUMNS = [
	'label',
	'placement',
	'group',
	'arrival_volts_V',
	'resistance_mOhm',
	'capacity_Ah',
	'verdict',
	'reasons',
	'updated_at',
	'cell_id'
] as const;

/** A pack's cells in label order (C2 before C10), with the inspection's verdict (whoever may see the pack). */
export async function packCellsCsv(member: Member, packId: string): Promise<CsvFile> {
	const batch = await listBatch(member, packId);
	return {
		fileName: `cells-${fileNamePart(batch.pack.name)}-${batch.pack.id.slice(0, 8)}.csv`,
		csv: toCsv(CELL_COLUMNS, cellRows(batch), member.workshop.timeZone)
	};
}

/** The CSV rows of a batch (already in label order). */
export function cellRows(batch: Batch): CsvValue[][] {
	return batch.cells.map((c) => [
		c.label,
		c.placement,
		c.groupIndex,
		c.arrivalVolts,
		c.resistanceMilliOhms,
		c.capacityAh,
		c.verdict,
		c.reasons.join(' '),
		c.updatedAt,
		c.id
	]);
}

export const ALERT_COLUMNS = [
	'opened_at',
	'pack',
	'session',
	'group',
	'kind',
	'severity',
	'title',
	'value',
	'threshold',
	'unit',
	'message',
	'what_to_do',
	'last_seen_at',
	'cleared_at',
	'acknowledged_at',
	'acknowledged_by',
	'acknowledgement_note',
	'escalated_at',
	'alert_id',
	'session_id'
] as const;

const ackBy = alias(users, 'ack_user');

/** The alert log, oldest first: the member's visible alerts, or one session's. */
export async function alertsCsv(member: Member, opts: { sessionId?: string } = {}): Promise<CsvFile> {
	requirePermission(member, 'alerts.view');
	let fileName = `alerts-${fileNamePart(member.workshop.slug)}.csv`;
	const where: SQL[] = [eq(alerts.workshopId, member.workshop.id)];
	if (!can(member.role, 'packs.viewAll')) where.push(eq(packs.packOwnerId, member.user.id));
	if (opts.sessionId) {
		const detail = await getSession(member, opts.sessionId);
		where.push(eq(alerts.sessionId, opts.sessionId));
		fileName = `alerts-${fileNamePart(detail.pack.name)}-${fileNamePart(detail.session.name || 'session')}-${detail.session.id.slice(0, 8)}.csv`;
	}
	const rows = await db
		.select({ alert: alerts, packName: packs.name, sessionName: chargeSessions.name, groupIndex: packGroups.index, ackName: ackBy.name })
		.from(alerts)
		.innerJoin(packs, eq(packs.id, alerts.packId))
		.innerJoin(chargeSessions, eq(chargeSessions.id, alerts.sessionId))
		.leftJoin(packGroups, eq(packGroups.id, alerts.groupId))
		.leftJoin(ackBy, eq(ackBy.id, alerts.acknowledgedBy))
		.where(and(...where))
		.orderBy(asc(alerts.openedAt), asc(alerts.id));
	const data: CsvValue[][] = rows.map(({ alert: a, packName, sessionName, groupIndex, ackName }) => [
		a.openedAt,
		packName,
		sessionName,
		groupIndex,
		a.kind,
		a.severity,
		a.title,
		a.value,
		a.threshold,
		a.unit,
		a.message,
		a.action,
		a.lastSeenAt,
		a.clearedAt,
		a.acknowledgedAt,
		a.acknowledgedAt ? (ackName ?? 'someone who has left') : null,
		a.ackNote,
		a.escalatedAt,
		a.id,
		a.sessionId
	]);
	return { fileName, csv: toCsv(ALERT_COLUMNS, data, member.workshop.timeZone) };
}

/** The whole workshop is the owner's to take away; everyone else gets 403 in words. */
export function requireOwner(member: Member): void {
	if (member.role !== 'owner')
		error(403, `Only an owner can download the whole workshop's data; a ${roleLabels[member.role].toLowerCase()} can download the readings, cells and alerts of what they may see from those pages.`);
}

export const PACK_COLUMNS = ['name', 'series', 'parallel', 'status', 'bms_fitted', 'pack_owner', 'notes', 'created_at', 'pack_id'] as const;
export const SESSION_COLUMNS = [
	'pack',
	'name',
	'kind',
	'target',
	'status',
	'set_volts_per_cell_V',
	'target_volts_per_cell_V',
	'amps_A',
	'planned_start',
	'planned_end',
	'started_at',
	'ended_at',
	'stop_reason',
	'on_watch',
	'session_id',
	'pack_id'
] as const;
export const STEP_COLUMNS = [
	'session_id',
	'position',
	'group',
	'role',
	'channel',
	'set_volts_V',
	'amps_A',
	'planned_Ah',
	'cc_hours_h',
	'cv_hours_h',
	'expected_start',
	'expected_end',
	'actual_start',
	'actual_end',
	'status'
] as const;
export const AUDIT_COLUMNS = ['at', 'who', 'kind', 'subject_type', 'subject_id', 'before', 'after', 'pack_id', 'session_id', 'event_id'] as const;
/** The self-discharge check's re-measures at rest: a loose cell's (label) or a group's (number). */
export const VOLTAGE_CHECK_COLUMNS = ['pack', 'cell', 'group', 'volts_V', 'measured_at', 'entered_by', 'pack_id', 'check_id'] as const;

const owner = alias(users, 'pack_owner');
const watch = alias(users, 'watch_user');

/** The workshop's packs, sessions, steps and audit trail (owners only), each one query. */
export async function workshopTables(member: Member) {
	requireOwner(member);
	const workshopId = member.workshop.id;
	const tz = member.workshop.timeZone;
	const [packRows, sessionRows, auditRows, checkRows] = await Promise.all([
		db
			.select({ pack: packs, ownerName: owner.name })
			.from(packs)
			.leftJoin(owner, eq(owner.id, packs.packOwnerId))
			.where(eq(packs.workshopId, workshopId))
			.orderBy(asc(packs.createdAt), asc(packs.id)),
		db
			.select({ s: chargeSessions, packName: packs.name, watchName: watch.name })
			.from(chargeSessions)
			.innerJoin(packs, eq(packs.id, chargeSessions.packId))
			.leftJoin(watch, eq(watch.id, chargeSessions.watchUserId))
			.where(eq(chargeSessions.workshopId, workshopId))
			.orderBy(asc(chargeSessions.plannedStart), asc(chargeSessions.id)),
		db.select().from(auditEvents).where(eq(auditEvents.workshopId, workshopId)).orderBy(desc(auditEvents.at), desc(auditEvents.id)),
		db
			.select({ check: voltageChecks, packName: packs.name, cellLabel: cells.label, groupIndex: packGroups.index, by: users.name })
			.from(voltageChecks)
			.innerJoin(packs, eq(packs.id, voltageChecks.packId))
			.leftJoin(cells, eq(cells.id, voltageChecks.cellId))
			.leftJoin(packGroups, eq(packGroups.id, voltageChecks.groupId))
			.leftJoin(users, eq(users.id, voltageChecks.enteredBy))
			.where(eq(voltageChecks.workshopId, workshopId))
			.orderBy(asc(packs.name), asc(voltageChecks.measuredAt), asc(voltageChecks.id))
	]);
	const sessionIds = sessionRows.map((r) => r.s.id);
	const stepRows = sessionIds.length
		? await db
				.select({ step: sessionSteps, groupIndex: packGroups.index })
				.from(sessionSteps)
				.leftJoin(packGroups, eq(packGroups.id, sessionSteps.groupId))
				.where(inArray(sessionSteps.sessionId, sessionIds))
				.orderBy(asc(sessionSteps.sessionId), asc(sessionSteps.position))
		: [];
	const seriesOf = new Map(packRows.map((r) => [r.pack.id, r.pack.series]));
	return {
		packs: packRows.map((r) => ({ id: r.pack.id, name: r.pack.name })),
		sessions: sessionRows.map((r) => ({ id: r.s.id, name: r.s.name, plannedStart: r.s.plannedStart, packName: r.packName, series: seriesOf.get(r.s.packId) ?? 1 })),
		packsCsv: toCsv(
			PACK_COLUMNS,
			packRows.map(({ pack: p, ownerName }) => [p.name, p.series, p.parallel, p.status, p.bmsFitted ? 'yes' : 'no', ownerName, p.notes, p.createdAt, p.id]),
			tz
		),
		sessionsCsv: toCsv(
			SESSION_COLUMNS,
			sessionRows.map(({ s, packName, watchName }) => [
				packName,
				s.name,
				s.kind,
				s.target,
				s.status,
				s.setVolts,
				s.targetVolts,
				s.amps,
				s.plannedStart,
				s.plannedEnd,
				s.startedAt,
				s.endedAt,
				s.stopReason,
				watchName,
				s.id,
				s.packId
			]),
			tz
		),
		stepsCsv: toCsv(
			STEP_COLUMNS,
			stepRows.map(({ step: t, groupIndex }) => [
				t.sessionId,
				t.position,
				groupIndex ?? 'pack',
				t.role,
				t.channelLabel,
				t.setVolts,
				t.amps,
				t.ah,
				t.ccHours,
				t.cvHours,
				t.expectedStart,
				t.expectedEnd,
				t.actualStart,
				t.actualEnd,
				t.status
			]),
			tz
		),
		voltageChecksCsv: toCsv(
			VOLTAGE_CHECK_COLUMNS,
			checkRows.map(({ check: c, packName, cellLabel, groupIndex, by }) => [packName, cellLabel, groupIndex, c.volts, c.measuredAt, by, c.packId, c.id]),
			tz
		),
		auditCsv: toCsv(
			AUDIT_COLUMNS,
			auditRows.map((e) => [
				e.at,
				e.actorLabel,
				e.kind,
				e.subjectType,
				e.subjectId,
				e.before ? JSON.stringify(e.before) : null,
				e.after ? JSON.stringify(e.after) : null,
				e.packId,
				e.sessionId,
				e.id
			]),
			tz
		)
	};
}

/** The readings of one session of the member's workshop, for the zip (the caller checked the owner). */
export async function readingsCsvFor(member: Member, session: { id: string; name: string; plannedStart: Date; packName: string; series: number }): Promise<CsvFile> {
	return {
		fileName: sessionFileName(session, session.packName),
		csv: toCsv(READING_COLUMNS, await readingRows(session.id, session.series), member.workshop.timeZone)
	};
}
