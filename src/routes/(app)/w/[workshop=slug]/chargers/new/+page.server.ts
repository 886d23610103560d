import { redirect } from '@sveltejs/kit';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { createCharger } from '$lib/server/chargers';
import { fail, setError, superValidate, zod4 } from '$lib/server/forms';
import { blankChannel, chargerSchema } from '$lib/schemas/chargers';
import type { Actions, PageServerLoad } from './$types';
import { guardActions } from '$lib/server/input-problems';

export const load: PageServerLoad = async ({ locals, params, url }) => {
	await requireMemberWith(locals, params, url, 'chargers.edit');
	const form = await superValidate({ kind: 'bench-supply' as const, channels: [blankChannel(1)] }, zod4(chargerSchema), {
		errors: false
	});
	return { form };
};

export const actions: Actions = guardActions<Actions>({
	default: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'chargers.edit');
		const form = await superValidate(request, zod4(chargerSchema));
		if (!form.valid) return fail(400, { form });
		const result = await createCharger(member, form.data);
		if (!result.ok) return setError(form, 'name', result.message);
		redirect(303, `/w/${member.workshop.slug}/chargers`);
	}
});
