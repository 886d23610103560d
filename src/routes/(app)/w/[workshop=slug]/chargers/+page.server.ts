import { can } from '$lib/permissions';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { listChargers } from '$lib/server/chargers';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'chargers.view');
	return { chargers: await listChargers(member), canEdit: can(member.role, 'chargers.edit') };
};
