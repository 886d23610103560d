import { requireMemberWith } from '$lib/server/auth/permissions';
import { csvResponse, sessionReadingsCsv } from '$lib/server/exports';
import type { RequestHandler } from './$types';

/** The session's readings as CSV (whoever may see the session; it uploads back as a logger file). */
export const GET: RequestHandler = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'sessions.view');
	return csvResponse(await sessionReadingsCsv(member, params.sessionId));
};
