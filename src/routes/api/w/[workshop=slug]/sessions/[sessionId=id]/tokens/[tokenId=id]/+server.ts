import { json } from '@sveltejs/kit';
import { endpoint, problem, requireApiMember } from '$lib/server/api';
import { revokeDeviceToken } from '$lib/server/sessions/tokens';
import type { RequestHandler } from './$types';

/** Revokes the token: its device gets 401 from the next post on. The record stays, marked revoked. */
export const DELETE: RequestHandler = endpoint(async (event) => {
	const member = await requireApiMember(event, 'plans.edit');
	const result = await revokeDeviceToken(member, event.params.sessionId, event.params.tokenId);
	if (!result.ok) return problem(result.status, { message: result.message });
	return json({ device: result.device });
});
