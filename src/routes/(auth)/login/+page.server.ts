import { redirect } from '@sveltejs/kit';
import { signInWithPassword } from '$lib/server/accounts';
import { configuredProviders } from '$lib/server/auth/oauth';
import { createSession, setSessionCookie } from '$lib/server/auth/session';
import { fail, message, superValidate, zod4 } from '$lib/server/forms';
import { safeNext, signInSchema } from '$lib/schemas/auth';
import type { Actions, PageServerLoad } from './$types';

const notices: Record<string, string> = {
	'needs-password':
		'An account with that e-mail already exists. Sign in with its password, then link the provider from your account page.',
	'oauth-failed': 'The sign-in provider did not let us in. Try again, or use your e-mail and password.',
	'no-email': 'The provider did not share a verified e-mail address, so we cannot create an account from it.',
	'reset-done': 'Your password is changed. Sign in with the new one.'
};

export const load: PageServerLoad = async ({ locals, url }) => {
	const next = safeNext(url.searchParams.get('next'), '');
	if (locals.user) redirect(303, next || '/');
	const form = await superValidate({ next }, zod4(signInSchema), { errors: false });
	return {
		form,
		providers: configuredProviders(),
		notice: notices[url.searchParams.get('notice') ?? ''] ?? null
	};
};

export const actions: Actions = {
	default: async ({ request, cookies, url, getClientAddress, setHeaders }) => {
		const form = await superValidate(request, zod4(signInSchema));
		if (!form.valid) return fail(400, { form });
		const result = await signInWithPassword(form.data.email, form.data.password, getClientAddress());
		form.data.password = '';
		if (!result.ok && result.reason === 'rate-limited') {
			setHeaders({ 'Retry-After': String(result.retryAfterSeconds) });
			const minutes = Math.ceil(result.retryAfterSeconds / 60);
			return message(
				form,
				`Too many failed attempts. Wait ${minutes} minute${minutes === 1 ? '' : 's'} and try again, or reset your password.`,
				{ status: 429 }
			);
		}
		if (!result.ok) return message(form, 'That e-mail and password do not match an account.', { status: 400 });
		const session = await createSession(result.userId);
		setSessionCookie(cookies, session, url);
		redirect(303, safeNext(form.data.next));
	}
};
