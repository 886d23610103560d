import { requireMember } from '$lib/server/auth/permissions';
import { workshopZip, zipResponse } from '$lib/server/exports';
import type { RequestHandler } from './$types';

/** The whole workshop as a zip of CSVs, streamed (owners only; 403 in words for anyone else). */
export const GET: RequestHandler = async ({ locals, params, url }) => {
	const member = await requireMember(locals, params, url);
	return zipResponse(await workshopZip(member));
};
