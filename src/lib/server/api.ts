/** Small helpers for the JSON API: read a body with a zod schema, answer problems in plain words. */
import { error, json } from '@sveltejs/kit';
import type { z } from 'zod';
import type { Action } from '$lib/permissions';
import { requireMemberWith, type Member } from './auth/permissions';

export type ApiProblem = { message: string; errors?: { path: string; message: string }[] };

export function problem(status: number, body: ApiProblem): Response {
	return json(body, { status });
}

/** The parsed body, or a 400 Response naming each field that is wrong. */
export async function readJson<S extends z.ZodType>(request: Request, schema: S): Promise<z.output<S> | Response> {
	let body: unknown;
	try {
		body = await request.json();
	} catch {
		return problem(400, { message: 'The request body must be JSON.' });
	}
	const parsed = schema.safeParse(body);
	if (parsed.success) return parsed.data;
	return problem(400, {
		message: 'Some fields are not valid.',
		errors: parsed.error.issues.map((i) => ({ path: i.path.join('.'), message: i.message }))
	});
}

/**
 * The member behind an API request: 401 without a session (never the pages' redirect to sign-in),
 * 404 for a workshop they are not in, 403 when their role may not do `action`.
 */
export async function requireApiMember(
	event: { locals: App.Locals; params: { workshop?: string }; url: URL },
	action: Action
): Promise<Member> {
	if (!event.locals.user) error(401, 'Sign in first.');
	return requireMemberWith(event.locals, event.params, event.url, action);
}
