import { error, fail, redirect } from '@sveltejs/kit';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { guardActions } from '$lib/server/input-problems';
import { getSession, loadPlanContext, savedPlanValues, updateSession } from '$lib/server/sessions/core';
import { sessionPatchSchema } from '$lib/schemas/sessions';
import { readPlanBody } from '../../new/plan-action.server';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'plans.edit');
	const detail = await getSession(member, params.sessionId);
	const s = detail.session;
	const editable = s.status === 'draft' || s.status === 'planned';
	const context = editable ? await loadPlanContext(member, s.packId) : null;
	const { limitOverrides, ...values } = savedPlanValues(s);
	return {
		sessionId: s.id,
		status: s.status,
		packName: detail.pack.name,
		context,
		// The session's plan fields fill the form (not the whole row).
		saved: { ...values, packId: s.packId, startVolts: { ...(context?.startVolts ?? {}), ...s.startVolts } },
		overrides: limitOverrides
	};
};

export const actions: Actions = guardActions<Actions>({
	default: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'plans.edit');
		const body = await readPlanBody(request, sessionPatchSchema, ['packId']);
		if (!body.ok) return body.failure;
		const result = await updateSession(member, params.sessionId, body.data);
		if (!result.ok) {
			if (result.status === 404) error(404, 'Not found');
			return fail(result.status, { message: result.message, field: result.field ?? null });
		}
		redirect(303, `/w/${member.workshop.slug}/sessions/${params.sessionId}`);
	}
});
