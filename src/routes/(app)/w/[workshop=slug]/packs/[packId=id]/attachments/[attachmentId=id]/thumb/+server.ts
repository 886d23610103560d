import { readAttachment } from '$lib/server/attachments';
import { attachmentResponse } from '$lib/server/attachments-http';
import { requireMemberWith } from '$lib/server/auth/permissions';
import type { RequestHandler } from './$types';

/** The WebP preview; 404 for types without one (PDF, HEIC that could not be decoded). */
export const GET: RequestHandler = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'packs.viewOwn');
	return attachmentResponse(await readAttachment(member, params.packId, params.attachmentId, 'thumb'));
};
