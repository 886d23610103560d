import { can } from '$lib/permissions';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { listPacks } from '$lib/server/packs';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'packs.viewOwn');
	return {
		packs: await listPacks(member),
		canEdit: can(member.role, 'packs.edit'),
		seesAll: can(member.role, 'packs.viewAll')
	};
};
