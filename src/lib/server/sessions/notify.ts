/**
 * Session events for live views: a PostgreSQL NOTIFY on one channel, sent inside the transaction
 * of the change (PostgreSQL delivers it on commit, never for a rolled-back change), so that every
 * app instance listening (src/lib/server/sessions/live.ts) hears it.
 */
import { sql } from 'drizzle-orm';
import type { Db, Tx } from '../db';

export const SESSION_EVENTS_CHANNEL = 'cellsitter_session_events';

/** 'alert': an alert of the session was raised, cleared or acknowledged. */
export type SessionEventKind = 'reading' | 'status' | 'step' | 'watch' | 'plan' | 'alert';

export type SessionEvent = {
	sessionId: string;
	workshopId: string;
	kind: SessionEventKind;
	/** For 'reading': how many readings were stored and the newest taken-at time. */
	count?: number;
	newest?: string;
};

/** Queues the event in `tx`; it goes out when the transaction commits. */
export async function notifySession(tx: Tx | Db, event: SessionEvent): Promise<void> {
	await tx.execute(sql`select pg_notify(${SESSION_EVENTS_CHANNEL}, ${JSON.stringify(event)})`);
}
