import { allowedActions } from '$lib/permissions';
import { requireMember } from '$lib/server/auth/permissions';
import { listWorkshopsOf } from '$lib/server/workshops';
import type { LayoutServerLoad } from './$types';

// For the shell's look only: every page and action below checks the member itself.
export const load: LayoutServerLoad = async ({ locals, params, url }) => {
	const member = await requireMember(locals, params, url);
	const workshops = await listWorkshopsOf(member.user.id);
	return {
		user: member.user,
		workshop: { name: member.workshop.name, slug: member.workshop.slug, timeZone: member.workshop.timeZone },
		role: member.role,
		allowed: allowedActions(member.role),
		workshops: workshops.map((w) => ({ name: w.name, slug: w.slug, role: w.role }))
	};
};
