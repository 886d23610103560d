/** What the sessions' verbs answer: a value for every expected failure, with its HTTP status. */
import type { ChargeSession, SessionStep } from '../db/schema';

export type SessionFailure = {
	ok: false;
	status: 400 | 404 | 409;
	message: string;
	/** The form field the message belongs to, when there is one (e.g. `limits.overVoltsCritical`). */
	field?: string;
	/** A short machine word for the failure (e.g. `wrong-state`, `channel-busy`). */
	reason?: string;
};

export type SessionChange = { ok: true; session: ChargeSession; step?: SessionStep };

export type SessionChangeResult = SessionChange | SessionFailure;

export const notFound = (): SessionFailure => ({ ok: false, status: 404, message: 'Not found', reason: 'not-found' });

export const conflict = (message: string, reason = 'conflict'): SessionFailure => ({ ok: false, status: 409, message, reason });

export const invalid = (message: string, field?: string, reason = 'invalid'): SessionFailure => ({
	ok: false,
	status: 400,
	message,
	reason,
	...(field ? { field } : {})
});
