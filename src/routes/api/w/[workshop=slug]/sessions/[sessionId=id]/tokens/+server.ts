import { json } from '@sveltejs/kit';
import { deviceTokenInputSchema } from '$lib/schemas/readings';
import { endpoint, problem, readJson, requireApiMember } from '$lib/server/api';
import { issueDeviceToken, listDeviceTokens } from '$lib/server/sessions/tokens';
import type { RequestHandler } from './$types';

/** The session's device tokens (never the tokens themselves). */
export const GET: RequestHandler = endpoint(async (event) => {
	const member = await requireApiMember(event, 'plans.edit');
	const devices = await listDeviceTokens(member, event.params.sessionId);
	if (!devices) return problem(404, { message: 'Not found' });
	return json({ devices });
});

/** Issues a token: the answer is the only time it is shown. */
export const POST: RequestHandler = endpoint(async (event) => {
	const member = await requireApiMember(event, 'plans.edit');
	const input = await readJson(event.request, deviceTokenInputSchema);
	if (input instanceof Response) return input;
	const result = await issueDeviceToken(member, event.params.sessionId, input.name);
	if (!result.ok) return problem(result.status, { message: result.message });
	return json({ token: result.token, device: result.device }, { status: 201, headers: { 'cache-control': 'no-store' } });
});
