/** Small helpers for the JSON API: read a body with a zod schema, answer problems in plain words. */
import { error, json } from '@sveltejs/kit';
import type { z } from 'zod';
import type { Action } from '$lib/permissions';
import { requireMemberWith, type Member } from './auth/permissions';
import { inputProblem } from './input-problems';

export type ApiProblem = { message: string; reason?: string; errors?: { path: string; message: string }[] };

export function problem(status: number, body: ApiProblem): Response {
	return json(body, { status });
}

/**
 * True when the request declares a JSON body. Only `application/json` is read: a form post or a
 * text/plain body (which a page on another site can send without a preflight) is refused before
 * anything parses it.
 */
function declaresJson(request: Request): boolean {
	const type = request.headers.get('content-type');
	return type !== null && type.split(';')[0].trim().toLowerCase() === 'application/json';
}

/** The parsed body, or a Response: 415 unless sent as JSON, 400 naming each field that is wrong. */
export async function readJson<S extends z.ZodType>(request: Request, schema: S): Promise<z.output<S> | Response> {
	if (!declaresJson(request)) {
		return problem(415, { message: 'Send the body as JSON, with the header Content-Type: application/json.' });
	}
	let body: unknown;
	try {
		body = await request.json();
	} catch {
		return problem(400, { message: 'The request body must be JSON.' });
	}
	const parsed = schema.safeParse(body);
	if (parsed.success) return parsed.data;
	const whole = parsed.error.issues.find((i) => i.path.length === 0 && i.code === 'invalid_type');
	if (whole && whole.code === 'invalid_type') {
		return problem(400, { message: `The request body must be a JSON ${whole.expected === 'array' ? 'list' : 'object'}.` });
	}
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

/**
 * An endpoint whose database errors caused by input (a name taken meanwhile, a record removed
 * meanwhile, a value out of range) answer 400/409 with a plain message instead of a 500.
 */
export function endpoint<E>(handler: (event: E) => Promise<Response>): (event: E) => Promise<Response> {
	return async (event) => {
		try {
			return await handler(event);
		} catch (e) {
			const found = inputProblem(e);
			if (!found) throw e;
			return problem(found.status, { message: found.message });
		}
	};
}
