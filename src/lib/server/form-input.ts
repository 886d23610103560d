/**
 * A form action's raw input, read and checked in one step: the posted body must be a readable
 * form (a broken multipart or urlencoded body is the sender's fault, not a 500), and its fields
 * must pass the zod schema — never a cast of FormData.
 */
import type { z } from 'zod';

export type FormInput<T> = { ok: true; data: T } | { ok: false; message: string };

const unreadable = 'The form could not be read. Reload the page and try again.';

/** The fields of the posted form parsed by `schema`, or the problems in plain words. */
export async function readForm<S extends z.ZodType>(request: Request, schema: S): Promise<FormInput<z.output<S>>> {
	let form: FormData;
	try {
		form = await request.formData();
	} catch {
		return { ok: false, message: unreadable };
	}
	const parsed = schema.safeParse(Object.fromEntries(form));
	if (parsed.success) return { ok: true, data: parsed.data };
	return { ok: false, message: [...new Set(parsed.error.issues.map((i) => i.message))].join(' ') };
}
