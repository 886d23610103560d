import { redirect } from '@sveltejs/kit';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { scanTarget } from '$lib/server/pack-labels';
import type { PageServerLoad } from './$types';

// What a pack's QR label holds (…/g for the pack, …/g/N for group N): never a page of its own.
// Signed out, requireMember sends the scanner to sign in and back here.
export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'packs.viewOwn');
	const group = params.group === undefined ? null : Number(params.group);
	redirect(303, await scanTarget(member, params.packId, group));
};
