import { redirect } from '@sveltejs/kit';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { listCellSpecs } from '$lib/server/cell-specs';
import { fail, setError, superValidate, zod4 } from '$lib/server/forms';
import { hasSessions, packOwnerChoices, PACK_KEEPS_SHAPE, requirePack, updatePack } from '$lib/server/packs';
import { db } from '$lib/server/db';
import { packSchema } from '$lib/schemas/packs';
import type { Actions, PageServerLoad } from './$types';
import { guardActions } from '$lib/server/input-problems';

export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'packs.edit');
	const pack = await requirePack(member, params.packId);
	const [specs, owners, form, shapeFixed] = await Promise.all([
		listCellSpecs(member),
		packOwnerChoices(member),
		superValidate({ ...pack, packOwnerId: pack.packOwnerId ?? '' }, zod4(packSchema)),
		hasSessions(db, pack.id)
	]);
	return { form, specs, owners, packName: pack.name, packId: pack.id, shapeNote: shapeFixed ? PACK_KEEPS_SHAPE : null };
};

export const actions: Actions = guardActions<Actions>({
	default: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'packs.edit');
		const form = await superValidate(request, zod4(packSchema));
		if (!form.valid) return fail(400, { form });
		const result = await updatePack(member, params.packId, form.data);
		if (!result.ok) return setError(form, result.field, result.message);
		redirect(303, `/w/${params.workshop}/packs/${params.packId}${result.clearedAssignment ? '?notice=matching-cleared' : ''}`);
	}
});
