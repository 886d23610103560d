/**
 * Database errors that bad or concurrent input can still cause after validation (a race with
 * another request, a constraint zod does not know), as a 400 or 409 with a plain message. The one
 * place that maps them: the JSON API (api.ts) and the form actions (guardActions) both use it, so
 * such input never becomes a 500. Anything else is a bug and stays one.
 */
import { error } from '@sveltejs/kit';
import { PG, pgCode, pgConstraint } from './db/errors';

export type InputProblem = { status: 400 | 409; message: string };

const conflict = (message: string): InputProblem => ({ status: 409, message });
const refused = (message: string): InputProblem => ({ status: 400, message });

const sameMoment = conflict('Someone changed this at the same moment. Reload the page and try again.');
const unstorable = refused('A text holds characters that cannot be stored (such as control characters). Remove them and try again.');

/** SQLSTATE → answer. Codes: PostgreSQL manual, Appendix A (see db/errors.ts). */
const problems: Record<string, InputProblem> = {
	[PG.uniqueViolation]: conflict('Something with the same name or label is already saved. Choose another and try again.'),
	[PG.foreignKeyViolation]: conflict('Something this refers to was removed or changed meanwhile. Reload the page and try again.'),
	[PG.checkViolation]: refused('A value is outside the range Cellsitter can keep. Check the numbers and try again.'),
	[PG.notNullViolation]: refused('A required value is missing. Fill in every field and try again.'),
	[PG.stringDataRightTruncation]: refused('A text is too long. Shorten it and try again.'),
	[PG.numericValueOutOfRange]: refused('A number is too large. Check the numbers and try again.'),
	[PG.invalidTextRepresentation]: refused('A value is not in the form expected. Check the fields and try again.'),
	[PG.characterNotInRepertoire]: unstorable,
	[PG.untranslatableCharacter]: unstorable,
	[PG.serializationFailure]: sameMoment,
	[PG.deadlockDetected]: sameMoment,
	[PG.lockNotAvailable]: conflict('Someone is changing this right now. Try again in a moment.')
};

/** Check violations that are conflicts with recorded data, not bad numbers: by constraint name. */
const conflicts: Record<string, InputProblem> = {
	// The trigger behind updatePack's own check (drizzle/0004_charge-sessions.sql).
	packs_keep_shape: conflict(
		'This pack has charge sessions: its groups in series, cells per group and cell spec stay as they are. Make a new pack for another layout.'
	)
};

/** The 4xx answer for a database error caused by input, or null when the error is something else. */
export function inputProblem(e: unknown): InputProblem | null {
	const code = pgCode(e);
	if (code === PG.checkViolation) {
		const name = pgConstraint(e);
		if (name && Object.hasOwn(conflicts, name)) return conflicts[name];
	}
	return code ? (problems[code] ?? null) : null;
}

/** Runs `work`; a database error caused by input becomes SvelteKit's error(status, message). */
export async function withInputProblems<T>(work: () => Promise<T>): Promise<T> {
	try {
		return await work();
	} catch (e) {
		const found = inputProblem(e);
		if (found) {
			console.warn(`Input refused by the database (${pgCode(e)}): ${found.message}`);
			error(found.status, found.message);
		}
		throw e;
	}
}

// `any`: each page's actions take their own RequestEvent type, which the wrapper passes through.
type AnyAction = (event: any) => unknown;

/**
 * Wraps every form action of a page so that a database error caused by input answers 400/409 with
 * a plain message (the page's error view) instead of a 500. Redirects and fail()s pass unchanged.
 */
export function guardActions<A extends Record<string, AnyAction>>(actions: A): A {
	const guarded: Record<string, AnyAction> = {};
	for (const [name, action] of Object.entries(actions)) {
		guarded[name] = (event) => withInputProblems(async () => action(event));
	}
	return guarded as A;
}
