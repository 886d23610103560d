import { attachmentResponse, deleteAttachment, readAttachment } from '$lib/server/attachments';
import { requireMember } from '$lib/server/auth/permissions';
import type { RequestHandler } from './$types';

/** The file itself, with the type read from its content when it was attached. */
export const GET: RequestHandler = async ({ locals, params, url }) => {
	const member = await requireMember(locals, params, url);
	return attachmentResponse(await readAttachment(member, params.packId, params.attachmentId, 'file'));
};

export const DELETE: RequestHandler = async ({ locals, params, url }) => {
	const member = await requireMember(locals, params, url);
	await deleteAttachment(member, params.packId, params.attachmentId);
	return new Response(null, { status: 204 });
};
