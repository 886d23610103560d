import { error, fail, redirect } from '@sveltejs/kit';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { guardActions } from '$lib/server/input-problems';
import { listPacks } from '$lib/server/packs';
import { createSession, loadPlanContext } from '$lib/server/sessions/core';
import { sessionPlanSchema } from '$lib/schemas/sessions';
import { readPlanBody } from './plan-action.server';
import type { Actions, PageServerLoad } from './$types';

const ID = /^[a-z2-7]{24}$/;

export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'plans.edit');
	const packId = url.searchParams.get('pack');
	const [packs, context] = await Promise.all([
		listPacks(member),
		packId && ID.test(packId) ? loadPlanContext(member, packId) : Promise.resolve(null)
	]);
	if (packId && !context) error(404, 'Not found');
	return {
		packs: packs.map((p) => ({ id: p.id, name: p.name, series: p.series, parallel: p.parallel, specName: p.specName })),
		context,
		me: member.user.id,
		now: new Date()
	};
};

export const actions: Actions = guardActions<Actions>({
	default: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'plans.edit');
		const body = await readPlanBody(request, sessionPlanSchema);
		if (!body.ok) return body.failure;
		const result = await createSession(member, body.data);
		if (!result.ok) {
			if (result.status === 404) error(404, 'Not found');
			return fail(result.status, { message: result.message, field: result.field ?? null });
		}
		redirect(303, `/w/${member.workshop.slug}/sessions/${result.session.id}`);
	}
});
