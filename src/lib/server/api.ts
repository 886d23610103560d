/** Small helpers for the JSON API: read a body with a zod schema, answer problems in plain words. */
import { json } from '@sveltejs/kit';
import type { z } from 'zod';

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
