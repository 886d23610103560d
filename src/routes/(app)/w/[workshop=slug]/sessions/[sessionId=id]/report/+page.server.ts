import { requireMemberWith } from '$lib/server/auth/permissions';
import { sessionReport } from '$lib/server/sessions/report';
import type { PageServerLoad } from './$types';

/** The printable report: whoever may see the session (a viewer, their own packs' only; 404 otherwise). */
export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'sessions.view');
	return { report: await sessionReport(member, params.sessionId), printedAt: new Date() };
};
