/** An expected failure is a value, never a throw: `reason` is a short kebab-case code. */
export interface Failure {
	ok: false;
	reason: string;
	/** Plain-words detail for people (which field, which group). */
	detail?: string;
}

export type Result<T> = ({ ok: true } & T) | Failure;

/** Builds a Failure; `detail` says in plain words what was wrong. */
export function fail(reason: string, detail?: string): Failure {
	return detail === undefined ? { ok: false, reason } : { ok: false, reason, detail };
}

/** True for a finite number (rejects NaN, ±Infinity and non-numbers). */
export function isFiniteNumber(value: unknown): value is number {
	return typeof value === 'number' && Number.isFinite(value);
}

/** True for a finite number greater than zero. */
export function isPositive(value: unknown): value is number {
	return isFiniteNumber(value) && value > 0;
}

/** True for a finite number of zero or more. */
export function isNonNegative(value: unknown): value is number {
	return isFiniteNumber(value) && value >= 0;
}

/** Milliseconds per hour and per minute (Date arithmetic). */
export const MS_PER_HOUR = 3_600_000;
export const MS_PER_MINUTE = 60_000;

/** Milliseconds of a Date, or NaN for anything that is not a valid Date. */
export function timeOf(value: unknown): number {
	return value instanceof Date ? value.getTime() : Number.NaN;
}
