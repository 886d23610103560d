import { error, json } from '@sveltejs/kit';
import { endpoint } from '$lib/server/api';
import { vapidPublicKey } from '$lib/server/push';
import type { RequestHandler } from './$types';

/** The server's VAPID public key (base64url), the applicationServerKey a browser subscribes with. */
export const GET: RequestHandler = endpoint(async ({ locals }) => {
	if (!locals.user) error(401, 'Sign in first.');
	return json({ publicKey: await vapidPublicKey() });
});
