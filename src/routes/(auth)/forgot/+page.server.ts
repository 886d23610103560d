import { requestPasswordReset } from '$lib/server/accounts';
import { fail, message, superValidate, zod4 } from '$lib/server/forms';
import { forgotSchema } from '$lib/schemas/auth';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async () => ({ form: await superValidate(zod4(forgotSchema)) });

export const actions: Actions = {
	default: async ({ request, getClientAddress, setHeaders }) => {
		const form = await superValidate(request, zod4(forgotSchema));
		if (!form.valid) return fail(400, { form });
		const result = await requestPasswordReset(form.data.email, getClientAddress());
		if (!result.ok && result.reason === 'mail-unavailable') {
			return message(form, 'We cannot send e-mail just now, so no reset link can go out. Try again in a few minutes.', {
				status: 503
			});
		}
		if (!result.ok) {
			setHeaders({ 'Retry-After': String(result.retryAfterSeconds) });
			const minutes = Math.ceil(result.retryAfterSeconds / 60);
			return message(
				form,
				`Too many reset requests. Wait ${minutes} minute${minutes === 1 ? '' : 's'}, then ask again — or use the link already sent.`,
				{ status: 429 }
			);
		}
		// The same answer whether or not the address has an account.
		return message(form, `If ${form.data.email} has an account, a reset link is on its way. It works once, for an hour.`);
	}
};
