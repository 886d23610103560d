import { can } from '$lib/permissions';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { listCellSpecs } from '$lib/server/cell-specs';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'packs.viewAll');
	return { specs: await listCellSpecs(member), canEdit: can(member.role, 'specs.edit') };
};
