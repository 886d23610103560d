import { redirect } from '@sveltejs/kit';
import { completeOAuthSignUp, findPendingOAuth } from '$lib/server/accounts';
import { createSession, setSessionCookie } from '$lib/server/auth/session';
import { fail, message, superValidate, zod4 } from '$lib/server/forms';
import { findInvitation } from '$lib/server/workshops-invitations';
import { oauthSignUpSchema, safeNext } from '$lib/schemas/auth';
import type { Actions, PageServerLoad } from './$types';

/** An invitation link the person came from, when it is for this e-mail. */
async function invitationFrom(next: string, email: string) {
	const token = /^\/invite\/([a-z0-9]+)$/.exec(next)?.[1];
	const invitation = token ? await findInvitation(token) : null;
	return invitation && invitation.email === email ? { token: token!, invitation } : null;
}

export const load: PageServerLoad = async ({ cookies, url }) => {
	const pending = await findPendingOAuth(cookies.get('oauth_pending') ?? '');
	if (!pending) redirect(303, '/login?notice=oauth-failed');
	const invited = await invitationFrom(safeNext(url.searchParams.get('next'), ''), pending.email);
	const form = await superValidate(
		{ name: pending.name, invitation: invited?.token ?? '' },
		zod4(oauthSignUpSchema),
		{ errors: false }
	);
	return {
		form,
		email: pending.email,
		invitation: invited && { workshopName: invited.invitation.workshopName, role: invited.invitation.role }
	};
};

export const actions: Actions = {
	default: async ({ request, cookies, url }) => {
		const form = await superValidate(request, zod4(oauthSignUpSchema));
		if (!form.valid) return fail(400, { form });
		const { name, workshopName, timeZone, invitation } = form.data;
		const result = await completeOAuthSignUp(cookies.get('oauth_pending') ?? '', {
			name,
			workshop: invitation ? undefined : { name: workshopName, timeZone },
			invitationToken: invitation || undefined
		});
		if (!result.ok) {
			const text =
				result.reason === 'email-taken'
					? 'An account with this e-mail exists now. Sign in with its password instead.'
					: 'This sign-in has expired. Start again from the sign-in page.';
			return message(form, text, { status: 400 });
		}
		cookies.delete('oauth_pending', { path: '/signup/oauth' });
		const session = await createSession(result.userId);
		setSessionCookie(cookies, session, url);
		redirect(303, `/w/${result.workshopSlug}/packs`);
	}
};
