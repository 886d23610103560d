import { error, json } from '@sveltejs/kit';
import { pushSubscriptionInputSchema, pushUnsubscribeSchema } from '$lib/schemas/push';
import { endpoint, problem, readJson } from '$lib/server/api';
import { listPushDevices, removePushDevice, savePushDevice } from '$lib/server/push-subscriptions';
import type { RequestHandler } from './$types';

/** Push belongs to the person, not to one workshop: signed in is all it asks. */
function signedIn(locals: App.Locals): string {
	if (!locals.user) error(401, 'Sign in first.');
	return locals.user.id;
}

/** The devices that get the caller's push alerts. */
export const GET: RequestHandler = endpoint(async ({ locals }) => {
	const userId = signedIn(locals);
	return json({ devices: await listPushDevices(userId) }, { headers: { 'cache-control': 'no-store' } });
});

/** Registers this device's subscription for the caller (201 when it is new to them, 200 when refreshed). */
export const POST: RequestHandler = endpoint(async ({ locals, request }) => {
	const userId = signedIn(locals);
	const input = await readJson(request, pushSubscriptionInputSchema);
	if (input instanceof Response) return input;
	const result = await savePushDevice(userId, input);
	if (!result.ok) return problem(result.status, { message: result.message });
	return json({ device: result.device, moved: result.moved }, { status: result.created || result.moved ? 201 : 200 });
});

/** Stops push to this device for the caller. Another person's subscription is never touched. */
export const DELETE: RequestHandler = endpoint(async ({ locals, request }) => {
	const userId = signedIn(locals);
	const input = await readJson(request, pushUnsubscribeSchema);
	if (input instanceof Response) return input;
	if (!(await removePushDevice(userId, input.endpoint))) {
		return problem(404, { message: 'Alerts do not go to this device for you, so there is nothing to stop.' });
	}
	return json({ removed: true });
});
