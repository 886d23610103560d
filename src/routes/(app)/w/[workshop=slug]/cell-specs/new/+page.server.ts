import { redirect } from '@sveltejs/kit';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { createCellSpec } from '$lib/server/cell-specs';
import { chemistryChoices } from '$lib/server/chemistry-choices';
import { fail, setError, superValidate, zod4 } from '$lib/server/forms';
import { cellSpecSchema } from '$lib/schemas/packs';
import type { Actions, PageServerLoad } from './$types';
import { guardActions } from '$lib/server/input-problems';

export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'specs.edit');
	const [form, chemistryOptions] = await Promise.all([
		superValidate({ chemistry: 'builtin:nmc' }, zod4(cellSpecSchema), { errors: false }),
		chemistryChoices(member)
	]);
	return { form, chemistryOptions };
};

export const actions: Actions = guardActions<Actions>({
	default: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'specs.edit');
		const form = await superValidate(request, zod4(cellSpecSchema));
		if (!form.valid) return fail(400, { form });
		const result = await createCellSpec(member, form.data);
		if (!result.ok) return setError(form, result.reason === 'name-taken' ? 'name' : 'chemistry', result.message);
		redirect(303, url.searchParams.get('next') === 'new-pack' ? `/w/${params.workshop}/packs/new?spec=${result.spec.id}` : `/w/${params.workshop}/cell-specs`);
	}
});
