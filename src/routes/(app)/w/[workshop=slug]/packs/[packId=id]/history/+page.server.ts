import { requireMemberWith } from '$lib/server/auth/permissions';
import { loadPackHistory } from '$lib/server/sessions/history';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals, params, url }) => {
	// loadPackHistory checks the pack itself (requirePack): a viewer sees only the packs they own.
	const member = await requireMemberWith(locals, params, url, 'packs.viewOwn');
	const history = await loadPackHistory(member, params.packId);
	return {
		...history,
		timeZone: member.workshop.timeZone,
		sessions: history.sessions.map((s) => ({ ...s, startedAt: s.startedAt.toISOString(), endedAt: s.endedAt?.toISOString() ?? null }))
	};
};
