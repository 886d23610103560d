import { redirect } from '@sveltejs/kit';
import { chemistries, isChemistryId } from '$lib/engine';
import { formValuesOf } from '$lib/chemistry-form';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { createChemistryProfile } from '$lib/server/chemistry-profiles';
import { fail, setError, superValidate, zod4 } from '$lib/server/forms';
import { chemistryProfileSchema } from '$lib/schemas/chemistry';
import type { Actions, PageServerLoad } from './$types';
import { guardActions } from '$lib/server/input-problems';

export const load: PageServerLoad = async ({ locals, params, url }) => {
	await requireMemberWith(locals, params, url, 'specs.edit');
	const asked = url.searchParams.get('from');
	const from = isChemistryId(asked) ? asked : 'nmc';
	const form = await superValidate({ name: '', source: '', ...formValuesOf(chemistries[from]) }, zod4(chemistryProfileSchema), {
		errors: false
	});
	return { form, from };
};

export const actions: Actions = guardActions<Actions>({
	default: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'specs.edit');
		const form = await superValidate(request, zod4(chemistryProfileSchema));
		if (!form.valid) return fail(400, { form });
		const result = await createChemistryProfile(member, form.data);
		if (!result.ok) {
			if (result.reason === 'name-taken') return setError(form, 'name', result.message);
			// Past the family's usual limits without the datasheet confirmation: 400, beside the checkbox.
			if (result.reason === 'needs-datasheet') return setError(form, 'datasheetAllows', result.message);
			return setError(form, '', `Cellsitter cannot use this profile: ${result.message}`);
		}
		redirect(303, `/w/${member.workshop.slug}/chemistries`);
	}
});
