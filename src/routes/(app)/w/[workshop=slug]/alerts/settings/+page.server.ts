import { alertSettingsFormSchema, settingsFromForm } from '$lib/schemas/alert-settings';
import { getAlertSettings, updateAlertSettings } from '$lib/server/alerts/settings';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { fail, message, superValidate, zod4 } from '$lib/server/forms';
import { guardActions } from '$lib/server/input-problems';
import type { Actions, PageServerLoad } from './$types';

/** The signed-in member's own alert settings in this workshop (any role: a viewer is told of their packs). */
export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'workshop.view');
	const settings = await getAlertSettings(member);
	const form = await superValidate(
		{ ...settings, quietFrom: settings.quietFrom ?? '', quietTo: settings.quietTo ?? '' },
		zod4(alertSettingsFormSchema)
	);
	return { form, timeZone: member.workshop.timeZone };
};

export const actions: Actions = guardActions<Actions>({
	save: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'workshop.view');
		const form = await superValidate(request, zod4(alertSettingsFormSchema));
		if (!form.valid) return fail(400, { form });
		await updateAlertSettings(member, settingsFromForm(form.data));
		return message(form, 'Saved.');
	}
});
