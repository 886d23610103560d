import { alertListQuerySchema } from '$lib/schemas/alert-inbox';
import { listAlerts } from '$lib/server/alerts/inbox';
import { requireMemberWith } from '$lib/server/auth/permissions';
import type { PageServerLoad } from './$types';

const EARLIER_PAGE = 30;

/** The inbox: every alert needing attention (critical first), then the acknowledged ones, newest first, a page at a time. */
export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'alerts.view');
	// A bad ?before= (an old or edited link) shows the first page.
	const query = alertListQuerySchema.safeParse({ before: url.searchParams.get('before') ?? undefined });
	const before = query.success ? query.data.before : undefined;
	const [open, earlier] = await Promise.all([
		listAlerts(member, { status: 'open', limit: 200 }),
		listAlerts(member, { status: 'acknowledged', limit: EARLIER_PAGE, before })
	]);
	return {
		open,
		earlier,
		paged: before !== undefined,
		olderThan: earlier.length === EARLIER_PAGE ? earlier[earlier.length - 1].openedAt.toISOString() : null,
		role: member.role
	};
};
