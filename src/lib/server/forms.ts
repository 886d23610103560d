/** The one place pages get superforms' zod 4 adapter from. */
import { superValidate as validate } from 'sveltekit-superforms';

export { message, setError, fail } from 'sveltekit-superforms';
export { zod4 } from 'sveltekit-superforms/adapters';

/** What a form answers when its body could not be read as a form at all. */
export const UNREADABLE_FORM = 'The form could not be read. Reload the page and try again.';

type Validated = { posted: boolean; valid: boolean; message?: unknown };
const run = validate as (...a: unknown[]) => Promise<Validated>;

/**
 * superforms' superValidate, with two changes for a posted request whose body is not a readable
 * form: it comes back invalid with a message. superforms reads a broken multipart body or a
 * text/plain post as "nothing posted" — no field errors — so the 400 would say nothing; and JSON
 * data of the wrong shape (a list where the form's object belongs) makes it throw a TypeError
 * while merging defaults, which would be a 500.
 */
export const superValidate = (async (...args: unknown[]) => {
	const posted = args[0] instanceof Request && args[0].method !== 'GET';
	let form: Validated;
	try {
		form = await run(...args);
	} catch (e) {
		if (!posted || !(e instanceof TypeError)) throw e;
		// The form as if nothing had been sent (its defaults), refused with the message below.
		form = await run(...args.slice(1));
		form.posted = false;
	}
	if (posted && !form.posted) {
		form.valid = false;
		form.message ??= UNREADABLE_FORM;
	}
	return form;
}) as typeof validate;
