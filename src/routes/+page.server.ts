import { redirect } from '@sveltejs/kit';
import { listWorkshopsOf } from '$lib/server/workshops';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals }) => {
	if (!locals.user) return {};
	const [first] = await listWorkshopsOf(locals.user.id);
	redirect(303, first ? `/w/${first.slug}/packs` : '/account');
};
