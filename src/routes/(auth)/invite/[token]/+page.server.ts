import { error, redirect } from '@sveltejs/kit';
import { acceptInvitation, findInvitation } from '$lib/server/workshops-invitations';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ params, locals }) => {
	const invitation = await findInvitation(params.token);
	return {
		invitation: invitation && {
			email: invitation.email,
			role: invitation.role,
			workshopName: invitation.workshopName
		},
		signedInAs: locals.user?.email ?? null
	};
};

export const actions: Actions = {
	accept: async ({ params, locals, url }) => {
		if (!locals.user) redirect(303, `/login?next=${encodeURIComponent(url.pathname)}`);
		const result = await acceptInvitation(locals.user, params.token);
		if (result.ok) redirect(303, `/w/${result.workshopSlug}/packs`);
		if (result.reason === 'wrong-email') {
			error(403, 'This invitation was sent to another e-mail address. Sign in with that address to accept it.');
		}
		error(410, 'This invitation has expired or was already used. Ask the workshop owner for a new one.');
	}
};
