import { redirect } from '@sveltejs/kit';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { listCellSpecs } from '$lib/server/cell-specs';
import { fail, setError, superValidate, zod4 } from '$lib/server/forms';
import { createPack, packOwnerChoices } from '$lib/server/packs';
import { packSchema } from '$lib/schemas/packs';
import type { Actions, PageServerLoad } from './$types';
import { guardActions } from '$lib/server/input-problems';

export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'packs.edit');
	const [specs, owners] = await Promise.all([listCellSpecs(member), packOwnerChoices(member)]);
	const chosen = specs.find((s) => s.id === url.searchParams.get('spec')) ?? specs[0];
	const form = await superValidate(
		{ cellSpecId: chosen?.id ?? '', series: 13, parallel: 4, status: 'planning' as const },
		zod4(packSchema),
		{ errors: false }
	);
	return { form, specs, owners };
};

export const actions: Actions = guardActions<Actions>({
	default: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'packs.edit');
		const form = await superValidate(request, zod4(packSchema));
		if (!form.valid) return fail(400, { form });
		const result = await createPack(member, form.data);
		if (!result.ok) return setError(form, result.field, result.message);
		redirect(303, `/w/${params.workshop}/packs/${result.pack.id}`);
	}
});
