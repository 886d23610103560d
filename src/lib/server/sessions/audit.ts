/**
 * The audit trail: who changed what, when, with the fields before and after. Written with the
 * transaction of the change itself, so a change and its record commit or fail together.
 */
import { auditEvents } from '../db/schema';
import type { Tx } from '../db';

export type AuditKind =
	| 'session.create'
	| 'session.update'
	| 'session.start'
	| 'session.pause'
	| 'session.resume'
	| 'session.stop'
	| 'session.done'
	| 'watch.handover'
	| 'step.start'
	| 'step.done'
	| 'step.skip'
	| 'reading.edit'
	| 'device-token.issue'
	| 'device-token.revoke'
	| 'logger-mapping.update'
	| 'alert.acknowledge'
	| 'watchers.change';

export type AuditEntry = {
	workshopId: string;
	/** The person, or null for a device (then actorLabel names the token). */
	actorId: string | null;
	actorLabel: string;
	kind: AuditKind;
	packId?: string | null;
	sessionId?: string | null;
	subjectType: 'session' | 'step' | 'reading' | 'device-token' | 'logger-mapping' | 'alert';
	subjectId: string;
	before?: Record<string, unknown> | null;
	after?: Record<string, unknown> | null;
	/** Defaults to the database's now(). */
	at?: Date;
};

/** Writes one audit event inside `tx` (the change's own transaction). */
export async function writeAudit(tx: Tx, entry: AuditEntry): Promise<void> {
	await tx.insert(auditEvents).values({
		workshopId: entry.workshopId,
		actorId: entry.actorId,
		actorLabel: entry.actorLabel,
		kind: entry.kind,
		packId: entry.packId ?? null,
		sessionId: entry.sessionId ?? null,
		subjectType: entry.subjectType,
		subjectId: entry.subjectId,
		before: entry.before ?? null,
		after: entry.after ?? null,
		...(entry.at ? { at: entry.at } : {})
	});
}
