import { redirect } from '@sveltejs/kit';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { getCellSpec, updateCellSpec } from '$lib/server/cell-specs';
import { chemistryChoices } from '$lib/server/chemistry-choices';
import { fail, setError, superValidate, zod4 } from '$lib/server/forms';
import { cellSpecSchema } from '$lib/schemas/packs';
import type { Actions, PageServerLoad } from './$types';
import { guardActions } from '$lib/server/input-problems';

export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'specs.edit');
	const spec = await getCellSpec(member, params.specId);
	const [form, chemistryOptions] = await Promise.all([
		superValidate(
			{
				name: spec.name,
				chemistry: spec.chemistryChoice,
				capacityAh: spec.capacityAh,
				maxContinuousAmps: spec.maxContinuousAmps,
				maxBurstAmps: spec.maxBurstAmps,
				maxBurstSeconds: spec.maxBurstSeconds,
				maxChargeAmps: spec.maxChargeAmps,
				resistanceMilliOhms: spec.resistanceMilliOhms
			},
			zod4(cellSpecSchema)
		),
		chemistryChoices(member)
	]);
	return { form, chemistryOptions, specName: spec.name };
};

export const actions: Actions = guardActions<Actions>({
	default: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'specs.edit');
		const form = await superValidate(request, zod4(cellSpecSchema));
		if (!form.valid) return fail(400, { form });
		const result = await updateCellSpec(member, params.specId, form.data);
		if (!result.ok) return setError(form, result.reason === 'name-taken' ? 'name' : 'chemistry', result.message);
		redirect(303, `/w/${params.workshop}/cell-specs`);
	}
});
