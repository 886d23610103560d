import { requireMemberWith } from '$lib/server/auth/permissions';
import { csvResponse, packCellsCsv } from '$lib/server/exports';
import type { RequestHandler } from './$types';

/** The pack's cells as CSV, in label order (whoever may see the pack). */
export const GET: RequestHandler = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'packs.viewOwn');
	return csvResponse(await packCellsCsv(member, params.packId));
};
