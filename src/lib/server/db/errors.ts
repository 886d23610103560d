/**
 * PostgreSQL error codes that bad or concurrent input can cause, read from a postgres.js error
 * (drizzle wraps it: the driver's error is the `cause`). One place, so that every module maps the
 * same codes the same way. Codes: PostgreSQL manual, Appendix A "PostgreSQL Error Codes".
 */
export const PG = {
	uniqueViolation: '23505',
	foreignKeyViolation: '23503',
	checkViolation: '23514',
	notNullViolation: '23502',
	stringDataRightTruncation: '22001',
	numericValueOutOfRange: '22003',
	invalidTextRepresentation: '22P02',
	characterNotInRepertoire: '22021',
	untranslatableCharacter: '22P05',
	serializationFailure: '40001',
	deadlockDetected: '40P01',
	lockNotAvailable: '55P03'
} as const;

type DriverError = { code?: string; constraint_name?: string; detail?: string };

function driverError(e: unknown): DriverError | undefined {
	const err = (e as { cause?: unknown })?.cause ?? e;
	return typeof err === 'object' && err !== null ? (err as DriverError) : undefined;
}

/** The SQLSTATE of a database error, or undefined for anything else. */
export function pgCode(e: unknown): string | undefined {
	const code = driverError(e)?.code;
	return typeof code === 'string' && /^[0-9A-Z]{5}$/.test(code) ? code : undefined;
}

/** The constraint a violation names, when PostgreSQL reports one. */
export function pgConstraint(e: unknown): string | undefined {
	return driverError(e)?.constraint_name;
}

/** True for a unique violation, optionally of one named constraint or index. */
export function isUniqueViolation(e: unknown, constraint?: string): boolean {
	return pgCode(e) === PG.uniqueViolation && (constraint === undefined || pgConstraint(e) === constraint);
}
