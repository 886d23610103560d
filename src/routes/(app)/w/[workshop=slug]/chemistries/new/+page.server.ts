import { redirect } from '@sveltejs/kit';
import { chemistries, isChemistryId } from '$lib/engine';
import { formValuesOf } from '$lib/chemistry-form';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { createChemistryProfile } from '$lib/server/chemistry-profiles';
import { fail, setError, superValidate, zod4 } from '$lib/server/forms';
import { chemistryProfileSchema } from '$lib/schemas/chemistry';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals, params, url }) => {
	await requireMemberWith(locals, params, url, 'specs.edit');
	const asked = url.searchParams.get('from');
	const from = isChemistryId(asked) ? asked : 'nmc';
	const form = await superValidate({ name: '', source: '', ...formValuesOf(chemistries[from]) }, zod4(chemistryProfileSchema), {
		errors: false
	});
	return { form, from };
};

export const actions: Actions = {
	default: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'specs.edit');
		const form = await superValidate(request, zod4(chemistryProfileSchema));
		if (!form.valid) return fail(400, { form });
		const result = await createChemistryProfile(member, form.data);
		if (!result.ok) {
			return result.reason === 'name-taken'
				? setError(form, 'name', result.message)
				: setError(form, '', `The engine cannot use this profile: ${result.message}`);
		}
		redirect(303, `/w/${member.workshop.slug}/chemistries`);
	}
};
