import { redirect } from '@sveltejs/kit';
import { signUp } from '$lib/server/accounts';
import { configuredProviders } from '$lib/server/auth/oauth';
import { createSession, setSessionCookie } from '$lib/server/auth/session';
import { fail, setError, superValidate, zod4 } from '$lib/server/forms';
import { findInvitation } from '$lib/server/workshops-invitations';
import { signUpSchema } from '$lib/schemas/auth';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals, url }) => {
	if (locals.user) redirect(303, '/');
	const token = url.searchParams.get('invitation') ?? '';
	const invitation = token ? await findInvitation(token) : null;
	const form = await superValidate(
		{ invitation: invitation ? token : '', email: invitation?.email ?? '' },
		zod4(signUpSchema),
		{ errors: false }
	);
	return {
		form,
		invitation: invitation && { workshopName: invitation.workshopName, role: invitation.role },
		invitationExpired: Boolean(token && !invitation),
		providers: configuredProviders()
	};
};

const refusals = {
	'email-taken': ['email', 'An account with this e-mail already exists. Sign in instead.'],
	'invitation-invalid': ['email', 'This invitation has expired or was already used. Ask for a new one.'],
	'invitation-wrong-email': ['email', 'This invitation was sent to another e-mail address.'],
	'workshop-missing': ['workshopName', 'Name your workshop.']
} as const;

export const actions: Actions = {
	default: async ({ request, cookies, url }) => {
		const form = await superValidate(request, zod4(signUpSchema));
		if (!form.valid) return fail(400, { form });
		const { name, email, password, workshopName, timeZone, invitation } = form.data;
		const result = await signUp({
			name,
			email,
			password,
			workshop: invitation ? undefined : { name: workshopName, timeZone },
			invitationToken: invitation || undefined
		});
		form.data.password = '';
		if (!result.ok) {
			const [field, text] = refusals[result.reason];
			return setError(form, field, text);
		}
		const session = await createSession(result.userId);
		setSessionCookie(cookies, session, url);
		redirect(303, `/w/${result.workshopSlug}/packs`);
	}
};
