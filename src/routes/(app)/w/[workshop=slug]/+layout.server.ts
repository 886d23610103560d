import { ALERTS_DEPENDENCY } from '$lib/alert-screen';
import { allowedActions } from '$lib/permissions';
import { alertSummary } from '$lib/server/alerts/inbox';
import { requireMember } from '$lib/server/auth/permissions';
import { listWorkshopsOf } from '$lib/server/workshops';
import type { LayoutServerLoad } from './$types';

// For the shell's look only: every page and action below checks the member itself.
export const load: LayoutServerLoad = async ({ locals, params, url, depends }) => {
	// The alert summary (red strip, Alerts tab count) is read again on every navigation — reading
	// the path makes it so — and when the run screen's live events invalidate it.
	depends(ALERTS_DEPENDENCY);
	void url.pathname;
	const member = await requireMember(locals, params, url);
	const [workshops, alerts] = await Promise.all([listWorkshopsOf(member.user.id), alertSummary(member)]);
	return {
		user: member.user,
		workshop: { name: member.workshop.name, slug: member.workshop.slug, timeZone: member.workshop.timeZone },
		role: member.role,
		allowed: allowedActions(member.role),
		workshops: workshops.map((w) => ({ name: w.name, slug: w.slug, role: w.role })),
		alerts
	};
};
