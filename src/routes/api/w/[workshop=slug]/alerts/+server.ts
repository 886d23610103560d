import { json } from '@sveltejs/kit';
import { problem, requireApiMember } from '$lib/server/api';
import { listAlerts } from '$lib/server/alerts/inbox';
import { alertListQuerySchema } from '$lib/schemas/alert-inbox';
import type { RequestHandler } from './$types';

/**
 * The alerts the member may see: `?status=open|acknowledged|all` (all by default), `sessionId`,
 * `limit` (1–200, 50 by default), `before` (an ISO time: opened before it). Needing attention
 * first, then critical, warning, information, then newest first.
 */
export const GET: RequestHandler = async (event) => {
	const member = await requireApiMember(event, 'alerts.view');
	const parsed = alertListQuerySchema.safeParse(Object.fromEntries(event.url.searchParams));
	if (!parsed.success) {
		return problem(400, {
			message: 'Some query parameters are not valid.',
			errors: parsed.error.issues.map((i) => ({ path: i.path.join('.'), message: i.message }))
		});
	}
	return json({ alerts: await listAlerts(member, parsed.data) });
};
