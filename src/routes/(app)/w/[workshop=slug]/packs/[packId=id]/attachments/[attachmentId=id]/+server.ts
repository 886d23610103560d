import { readAttachment, deleteAttachment } from '$lib/server/attachments';
import { attachmentResponse } from '$lib/server/attachments-http';
import { requireMemberWith } from '$lib/server/auth/permissions';
import type { RequestHandler } from './$types';

/** The file itself, with the type read from its content when it was attached (see attachments-http.ts). */
export const GET: RequestHandler = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'packs.viewOwn');
	return attachmentResponse(await readAttachment(member, params.packId, params.attachmentId, 'file'));
};

/** A role that may not attach may not remove either; who attached it decides the rest. */
export const DELETE: RequestHandler = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'attachments.add');
	await deleteAttachment(member, params.packId, params.attachmentId);
	return new Response(null, { status: 204 });
};
