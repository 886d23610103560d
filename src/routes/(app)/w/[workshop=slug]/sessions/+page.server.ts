import { can } from '$lib/permissions';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { readingMarks } from '$lib/server/jobs/reading-clock';
import { listSessionsForPeople } from '$lib/server/sessions/list';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'sessions.view');
	// The list shows a viewer only the sessions of packs they own; the marks are looked up for those.
	const [sessions, due] = await Promise.all([listSessionsForPeople(member), readingMarks(member.workshop.id)]);
	return {
		sessions: sessions.map((s) => ({ ...s, readingDueAt: due.get(s.id) ?? null })),
		canPlan: can(member.role, 'plans.edit')
	};
};
