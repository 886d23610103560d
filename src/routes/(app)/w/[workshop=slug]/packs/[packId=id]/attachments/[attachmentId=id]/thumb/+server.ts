import { attachmentResponse, readAttachment } from '$lib/server/attachments';
import { requireMember } from '$lib/server/auth/permissions';
import type { RequestHandler } from './$types';

/** The WebP preview; 404 for types without one (PDF, HEIC that could not be decoded). */
export const GET: RequestHandler = async ({ locals, params, url }) => {
	const member = await requireMember(locals, params, url);
	return attachmentResponse(await readAttachment(member, params.packId, params.attachmentId, 'thumb'));
};
