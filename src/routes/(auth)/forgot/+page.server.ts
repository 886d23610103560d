import { requestPasswordReset } from '$lib/server/accounts';
import { fail, message, superValidate, zod4 } from '$lib/server/forms';
import { forgotSchema } from '$lib/schemas/auth';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async () => ({ form: await superValidate(zod4(forgotSchema)) });

export const actions: Actions = {
	default: async ({ request, url }) => {
		const form = await superValidate(request, zod4(forgotSchema));
		if (!form.valid) return fail(400, { form });
		try {
			await requestPasswordReset(form.data.email, url.origin);
		} catch (e) {
			console.error('password reset mail failed', e);
			return message(form, 'We could not send the e-mail just now. Try again in a few minutes.', { status: 503 });
		}
		// The same answer whether or not the address has an account.
		return message(form, `If ${form.data.email} has an account, a reset link is on its way. It works once, for an hour.`);
	}
};
