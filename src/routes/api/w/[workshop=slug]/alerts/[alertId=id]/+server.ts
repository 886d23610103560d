import { error, json } from '@sveltejs/kit';
import { requireApiMember } from '$lib/server/api';
import { getAlert } from '$lib/server/alerts/inbox';
import type { RequestHandler } from './$types';

/** One alert with the reading behind it and its deliveries (who, channel, status, attempts, log). */
export const GET: RequestHandler = async (event) => {
	const member = await requireApiMember(event, 'alerts.view');
	const alert = await getAlert(member, event.params.alertId);
	if (!alert) error(404, 'Not found');
	return json({ alert });
};
