import { fail as kitFail, redirect } from '@sveltejs/kit';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { deleteChemistryProfile, getChemistryProfile, updateChemistryProfile } from '$lib/server/chemistry-profiles';
import { fail, setError, superValidate, zod4 } from '$lib/server/forms';
import { chemistryProfileSchema, percentFromSoc } from '$lib/schemas/chemistry';
import type { Actions, PageServerLoad } from './$types';
import { guardActions } from '$lib/server/input-problems';

export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'specs.edit');
	const p = await getChemistryProfile(member, params.profileId);
	const form = await superValidate(
		{
			name: p.name,
			family: p.family,
			minVolts: p.minVolts,
			fullDischargeVolts: p.fullDischargeVolts,
			nominalVolts: p.nominalVolts,
			maxChargeVolts: p.maxChargeVolts,
			storageVolts: p.storageVolts,
			chargeTempMinC: p.chargeTempMinC,
			chargeTempMaxC: p.chargeTempMaxC,
			dischargeTempMinC: p.dischargeTempMinC,
			dischargeTempMaxC: p.dischargeTempMaxC,
			defaultChargeC: p.defaultChargeC,
			terminationC: p.terminationC,
			cvShareAt1C: p.cvShareAt1C,
			restCurve: p.restCurve.map(([soc, volts]) => ({ socPercent: percentFromSoc(soc), volts })),
			source: p.source
		},
		zod4(chemistryProfileSchema),
		{ errors: false }
	);
	return {
		form,
		profile: { id: p.id, name: p.name, updatedAt: p.updatedAt, updatedByName: p.updatedByName, usedBySpecs: p.usedBySpecs }
	};
};

export const actions: Actions = guardActions<Actions>({
	save: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'specs.edit');
		const form = await superValidate(request, zod4(chemistryProfileSchema));
		if (!form.valid) return fail(400, { form });
		const result = await updateChemistryProfile(member, params.profileId, form.data);
		if (!result.ok) {
			if (result.reason === 'name-taken') return setError(form, 'name', result.message);
			// Past the family's usual limits without the datasheet confirmation: 400, beside the checkbox.
			if (result.reason === 'needs-datasheet') return setError(form, 'datasheetAllows', result.message);
			return setError(form, '', `Cellsitter cannot use this profile: ${result.message}`);
		}
		redirect(303, `/w/${member.workshop.slug}/chemistries`);
	},
	delete: async ({ locals, params, url }) => {
		const member = await requireMemberWith(locals, params, url, 'specs.edit');
		const result = await deleteChemistryProfile(member, params.profileId);
		if (!result.ok) return kitFail(409, { deleteError: result.message });
		redirect(303, `/w/${member.workshop.slug}/chemistries`);
	}
});
