/**
 * Logger CSV uploads: the workshop's column map (chosen once, used for every upload) and the
 * import of a file into a session — read with the same code as the browser's preview
 * (src/lib/logger-csv.ts) and stored through logReadings, all rows or none.
 */
import { and, eq, sql } from 'drizzle-orm';
import { LOGGER_CSV_MAX_BYTES, parseLoggerCsv, type LoggerMapping, type LoggerRowError } from '$lib/logger-csv';
import { requirePermission, type Member } from '../auth/permissions';
import { db } from '../db';
import { chargeSessions, loggerMappings, packs } from '../db/schema';
import { writeAudit } from './audit';
import { logReadings } from './readings';

/** The workshop's column map, or null before anyone chose one. */
export async function getLoggerMapping(member: Member): Promise<LoggerMapping | null> {
	const [row] = await db.select({ columns: loggerMappings.columns }).from(loggerMappings).where(eq(loggerMappings.workshopId, member.workshop.id));
	return row ? (row.columns as LoggerMapping) : null;
}

/** Saves the workshop's column map (anyone who may log readings); the change is audited. */
export async function saveLoggerMapping(member: Member, mapping: LoggerMapping): Promise<void> {
	requirePermission(member, 'readings.log');
	await db.transaction(async (tx) => {
		const [before] = await tx
			.select({ columns: loggerMappings.columns })
			.from(loggerMappings)
			.where(eq(loggerMappings.workshopId, member.workshop.id))
			.for('update');
		await tx
			.insert(loggerMappings)
			.values({ workshopId: member.workshop.id, columns: mapping, updatedBy: member.user.id })
			.onConflictDoUpdate({
				target: loggerMappings.workshopId,
				set: { columns: mapping, updatedBy: member.user.id, updatedAt: sql`now()` }
			});
		await writeAudit(tx, {
			workshopId: member.workshop.id,
			actorId: member.user.id,
			actorLabel: member.user.name,
			kind: 'logger-mapping.update',
			subjectType: 'logger-mapping',
			subjectId: member.workshop.id,
			before: before ? { columns: before.columns } : null,
			after: { columns: mapping }
		});
	});
}

export type LoggerImportResult =
	| { ok: true; stored: number; duplicates: number }
	| { ok: false; status: 400 | 404 | 409 | 413; message: string; errors: LoggerRowError[] };

/**
 * Imports a logger's CSV into the session with the workshop's column map: every row right and
 * stored, or nothing. Rows already stored by an earlier upload of the same file are duplicates.
 */
export async function importLoggerCsv(member: Member, sessionId: string, csv: string): Promise<LoggerImportResult> {
	requirePermission(member, 'readings.log');
	if (csv.length > LOGGER_CSV_MAX_BYTES)
		return {
			ok: false,
			status: 413,
			message: `The file is larger than ${LOGGER_CSV_MAX_BYTES / 1024 / 1024} MB, so nothing was imported. Split it into smaller files.`,
			errors: []
		};
	const mapping = await getLoggerMapping(member);
	if (!mapping) return { ok: false, status: 400, message: 'Choose which column of the logger’s file is which first, then upload it.', errors: [] };
	const [session] = await db
		.select({ series: packs.series })
		.from(chargeSessions)
		.innerJoin(packs, eq(packs.id, chargeSessions.packId))
		.where(and(eq(chargeSessions.id, sessionId), eq(chargeSessions.workshopId, member.workshop.id)));
	if (!session) return { ok: false, status: 404, message: 'Not found', errors: [] };

	const parsed = parseLoggerCsv(csv, mapping, { timeZone: member.workshop.timeZone, series: session.series });
	if (!parsed.ok) {
		const n = parsed.errors.filter((e) => e.row > 0).length;
		return {
			ok: false,
			status: 400,
			message: n ? `Nothing was imported: ${n} row${n === 1 ? ' has a problem' : 's have problems'}.` : parsed.errors[0].message,
			errors: parsed.errors
		};
	}
	const stored = await logReadings({ kind: 'member', member }, sessionId, parsed.readings, 'file');
	if (!stored.ok) return { ok: false, status: stored.status, message: stored.message, errors: [] };
	return { ok: true, stored: stored.stored, duplicates: stored.duplicates };
}
