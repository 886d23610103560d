import { can } from '$lib/permissions';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { listChemistries } from '$lib/server/chemistry-profiles';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'packs.viewAll');
	return { chemistries: await listChemistries(member), canEdit: can(member.role, 'specs.edit') };
};
