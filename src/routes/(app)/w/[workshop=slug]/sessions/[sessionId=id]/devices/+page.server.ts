import { error, fail } from '@sveltejs/kit';
import { z } from 'zod';
import { deviceTokenInputSchema } from '$lib/schemas/readings';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { readForm } from '$lib/server/form-input';
import { guardActions } from '$lib/server/input-problems';
import { sessionForMember } from '$lib/server/sessions/readings';
import { issueDeviceToken, listDeviceTokens, revokeDeviceToken } from '$lib/server/sessions/tokens';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'plans.edit');
	const [session, devices] = await Promise.all([sessionForMember(member, params.sessionId), listDeviceTokens(member, params.sessionId)]);
	if (!session || !devices) error(404, 'Not found');
	return {
		session: { id: session.id, name: session.name, packName: session.packName, series: session.series, status: session.status },
		devices,
		endpoint: `${url.origin}/api/w/${params.workshop}/sessions/${params.sessionId}/readings`
	};
};

export const actions: Actions = guardActions<Actions>({
	issue: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'plans.edit');
		const input = await readForm(request, deviceTokenInputSchema);
		if (!input.ok) return fail(400, { issueProblem: input.message });
		const result = await issueDeviceToken(member, params.sessionId, input.data.name);
		if (!result.ok) return fail(result.status, { issueProblem: result.message });
		return { issued: { token: result.token, name: result.device.name } };
	},
	revoke: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'plans.edit');
		const input = await readForm(request, z.object({ tokenId: z.string().regex(/^[a-z2-7]{24}$/, 'No such device token.') }));
		if (!input.ok) return fail(400, { revokeProblem: input.message });
		const result = await revokeDeviceToken(member, params.sessionId, input.data.tokenId);
		if (!result.ok) return fail(result.status, { revokeProblem: result.message });
		return { revoked: `${result.device.name} can no longer post readings.` };
	}
});
