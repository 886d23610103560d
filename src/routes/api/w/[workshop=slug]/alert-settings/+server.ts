import { json } from '@sveltejs/kit';
import { alertSettingsPatchSchema } from '$lib/schemas/alert-settings';
import { getAlertSettings, updateAlertSettings } from '$lib/server/alerts/settings';
import { endpoint, readJson, requireApiMember } from '$lib/server/api';
import type { RequestHandler } from './$types';

/** The signed-in member's own alert settings in this workshop. */
export const GET: RequestHandler = endpoint(async (event) => {
	const member = await requireApiMember(event, 'workshop.view');
	return json({ settings: await getAlertSettings(member), timeZone: member.workshop.timeZone });
});

/** Changes only the keys sent; quiet time goes as a pair (`quietFrom` and `quietTo`, or both null). */
export const PATCH: RequestHandler = endpoint(async (event) => {
	const member = await requireApiMember(event, 'workshop.view');
	const input = await readJson(event.request, alertSettingsPatchSchema);
	if (input instanceof Response) return input;
	return json({ settings: await updateAlertSettings(member, input), timeZone: member.workshop.timeZone });
});
