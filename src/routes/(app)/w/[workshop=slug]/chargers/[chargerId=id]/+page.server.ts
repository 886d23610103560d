import { fail as kitFail, redirect } from '@sveltejs/kit';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { deleteCharger, getCharger, updateCharger } from '$lib/server/chargers';
import { fail, setError, superValidate, zod4 } from '$lib/server/forms';
import { chargerSchema } from '$lib/schemas/chargers';
import type { Actions, PageServerLoad } from './$types';
import { guardActions } from '$lib/server/input-problems';

export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'chargers.edit');
	const charger = await getCharger(member, params.chargerId);
	const form = await superValidate(
		{
			name: charger.name,
			kind: charger.kind,
			notes: charger.notes,
			channels: charger.channels.map((c) => ({
				name: c.name,
				maxVolts: c.maxVolts,
				maxAmps: c.maxAmps,
				maxWatts: c.maxWatts,
				balanceAmps: c.balanceAmps,
				maxSeriesCells: c.maxSeriesCells
			}))
		},
		zod4(chargerSchema),
		{ errors: false }
	);
	return {
		form,
		charger: { id: charger.id, name: charger.name, updatedAt: charger.updatedAt, updatedByName: charger.updatedByName }
	};
};

export const actions: Actions = guardActions<Actions>({
	save: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'chargers.edit');
		const form = await superValidate(request, zod4(chargerSchema));
		if (!form.valid) return fail(400, { form });
		const result = await updateCharger(member, params.chargerId, form.data);
		if (!result.ok) return setError(form, 'name', result.message);
		redirect(303, `/w/${member.workshop.slug}/chargers`);
	},
	delete: async ({ locals, params, url }) => {
		const member = await requireMemberWith(locals, params, url, 'chargers.edit');
		const result = await deleteCharger(member, params.chargerId);
		if (!result.ok) return kitFail(409, { deleteError: result.message });
		redirect(303, `/w/${member.workshop.slug}/chargers`);
	}
});
