import { json } from '@sveltejs/kit';
import { endpoint, problem, readJson, requireApiMember } from '$lib/server/api';
import { acknowledgeAlert } from '$lib/server/alerts/inbox';
import { alertAckSchema } from '$lib/schemas/alert-inbox';
import type { RequestHandler } from './$types';

/**
 * Acknowledges the alert: `{ note? }`. 403 for a viewer, 404 for an alert the member cannot see,
 * 409 (naming who and when) when it is already acknowledged.
 */
export const POST: RequestHandler = endpoint(async (event) => {
	const member = await requireApiMember(event, 'alerts.acknowledge');
	const input = await readJson(event.request, alertAckSchema);
	if (input instanceof Response) return input;
	const result = await acknowledgeAlert(member, event.params.alertId, input.note ?? '');
	if (!result.ok) {
		return problem(result.status, {
			message: result.message,
			reason: result.reason,
			...(result.acknowledged ? { acknowledged: { by: result.acknowledged.by, at: result.acknowledged.at.toISOString() } } : {})
		});
	}
	return json({ alert: result.alert });
});
