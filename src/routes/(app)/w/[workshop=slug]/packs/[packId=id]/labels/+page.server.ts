import { requireMemberWith } from '$lib/server/auth/permissions';
import { packLabels } from '$lib/server/pack-labels';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'packs.viewOwn');
	return packLabels(member, params.packId);
};
