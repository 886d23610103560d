import { redirect } from '@sveltejs/kit';
import { isResetTokenUsable, resetPassword } from '$lib/server/accounts';
import { clearSessionCookie } from '$lib/server/auth/session';
import { fail, message, superValidate, zod4 } from '$lib/server/forms';
import { resetSchema } from '$lib/schemas/auth';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ params }) => ({
	usable: await isResetTokenUsable(params.token),
	form: await superValidate(zod4(resetSchema))
});

export const actions: Actions = {
	default: async ({ request, params, cookies, url }) => {
		const form = await superValidate(request, zod4(resetSchema));
		if (!form.valid) return fail(400, { form });
		const result = await resetPassword(params.token, form.data.password);
		if (!result.ok) {
			return message(form, 'This link has expired or was already used. Ask for a new one.', { status: 400 });
		}
		clearSessionCookie(cookies, url);
		redirect(303, '/login?notice=reset-done');
	}
};
