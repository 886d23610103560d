/**
 * What the plan form posts, read on the server: one hidden field `plan` with the JSON body of
 * `sessionPlanSchema` (the browser builds it from the same form values it planned with). Shared by
 * the new-session page and the edit page of a planned session.
 */
import { fail } from '@sveltejs/kit';
import type { z } from 'zod';

export type PlanActionFailure = { message: string; field: string | null };

/** The body as the schema reads it, or the 400 to answer with, in plain words. */
export async function readPlanBody<S extends z.ZodType>(
	request: Request,
	schema: S,
	/** Keys the form sends that this schema does not take (an edit cannot move a session to another pack). */
	drop: string[] = []
): Promise<{ ok: true; data: z.output<S> } | { ok: false; failure: ReturnType<typeof fail<PlanActionFailure>> }> {
	let text: FormDataEntryValue | null = null;
	try {
		text = (await request.formData()).get('plan');
	} catch {
		// A body that is not a readable form (broken multipart, text/plain): the same answer as a lost plan.
	}
	let body: unknown;
	try {
		body = typeof text === 'string' ? JSON.parse(text) : undefined;
	} catch {
		body = undefined;
	}
	if (body === undefined || body === null || typeof body !== 'object' || Array.isArray(body)) {
		return { ok: false, failure: fail(400, { message: 'The plan did not arrive whole. Reload the page and try again.', field: null }) };
	}
	const kept = Object.fromEntries(Object.entries(body).filter(([k]) => !drop.includes(k)));
	const parsed = schema.safeParse(kept);
	if (!parsed.success) {
		const issue = parsed.error.issues[0];
		return { ok: false, failure: fail(400, { message: issue.message, field: issue.path.join('.') || null }) };
	}
	return { ok: true, data: parsed.data };
}
