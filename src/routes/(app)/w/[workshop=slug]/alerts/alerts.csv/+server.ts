import { requireMemberWith } from '$lib/server/auth/permissions';
import { alertsCsv, csvResponse } from '$lib/server/exports';
import type { RequestHandler } from './$types';

/** The alert log as CSV: every alert the member may see, or one session's (?session=<id>; 404 when they may not see it). */
export const GET: RequestHandler = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'alerts.view');
	const sessionId = url.searchParams.get('session')?.trim() || undefined;
	return csvResponse(await alertsCsv(member, { sessionId }));
};
