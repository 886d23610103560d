import { requireMemberWith } from '$lib/server/auth/permissions';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals, params, url }) => {
	await requireMemberWith(locals, params, url, 'chargers.view');
	return {};
};
