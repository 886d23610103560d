import { error, fail } from '@sveltejs/kit';
import { alertAckSchema } from '$lib/schemas/alert-inbox';
import { acknowledgeAlert, getAlert } from '$lib/server/alerts/inbox';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { readForm } from '$lib/server/form-input';
import { guardActions } from '$lib/server/input-problems';
import type { Actions, PageServerLoad } from './$types';

/** One alert: what was found, the reading, what to do now, who was told and how, and its acknowledgement. */
export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'alerts.view');
	const alert = await getAlert(member, params.alertId);
	// Another workshop's alert, or a pack a viewer does not own: never confirm it exists.
	if (!alert) error(404, 'Not found');
	return { alert };
};

export const actions: Actions = guardActions<Actions>({
	/** Works without JavaScript: a plain form post with an optional note. */
	acknowledge: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'alerts.acknowledge');
		const form = await readForm(request, alertAckSchema);
		if (!form.ok) return fail(400, { message: form.message });
		const result = await acknowledgeAlert(member, params.alertId, form.data.note ?? '');
		if (!result.ok) return fail(result.status, { message: result.message });
		return { done: 'Acknowledged. The run screen’s alarm stops.' };
	}
});
