import { error, redirect } from '@sveltejs/kit';
import {
	findOAuthUser,
	findUserByEmail,
	holdPendingOAuth,
	linkOAuthAccount
} from '$lib/server/accounts';
import { OAuthFailed, finishAuthorization, providerInfo, type Identity } from '$lib/server/auth/oauth';
import { createSession, isSecureContext, setSessionCookie } from '$lib/server/auth/session';
import { safeNext } from '$lib/schemas/auth';
import type { RequestHandler } from './$types';

/**
 * The provider sends the person back here. A known identity signs in; a new one with an unused
 * e-mail goes on to choose its workshop; an e-mail already in use must sign in with its password
 * first (an OAuth login never attaches itself to an account by e-mail alone).
 */
export const GET: RequestHandler = async ({ params, url, cookies, locals }) => {
	const provider = providerInfo(params.provider);
	if (!provider) error(404, 'Not found');
	const state = cookies.get('oauth_state');
	const verifier = cookies.get('oauth_verifier');
	const intent = cookies.get('oauth_intent');
	const next = safeNext(cookies.get('oauth_next'), '');
	for (const name of ['oauth_state', 'oauth_verifier', 'oauth_intent', 'oauth_next']) {
		cookies.delete(name, { path: '/login/oauth' });
	}
	// A failed link goes back to the account page (a signed-in visit to /login would drop the notice).
	const failed = (reason: 'oauth-failed' | 'no-email') =>
		intent === 'link' && locals.user ? `/account?link-error=${reason}` : `/login?notice=${reason}`;
	const code = url.searchParams.get('code');
	if (!code || !state || !verifier || url.searchParams.get('state') !== state) redirect(303, failed('oauth-failed'));

	let identity: Identity;
	try {
		identity = await finishAuthorization(provider.id, url.origin, code, verifier);
	} catch (e) {
		console.error(`oauth ${provider.id} failed:`, e instanceof Error ? e.message : e);
		redirect(303, failed(e instanceof OAuthFailed && e.reason === 'no-email' ? 'no-email' : 'oauth-failed'));
	}

	if (intent === 'link') {
		if (!locals.user) redirect(303, '/login?next=/account');
		const linked = await linkOAuthAccount(locals.user.id, { provider: provider.id, ...identity });
		redirect(303, linked.ok ? `/account?linked=${provider.id}` : `/account?link-error=${linked.reason}`);
	}

	const userId = await findOAuthUser(provider.id, identity.providerUserId);
	if (userId) {
		const session = await createSession(userId);
		setSessionCookie(cookies, session, url);
		redirect(303, next || '/');
	}
	if (!identity.email) redirect(303, '/login?notice=no-email');
	if (await findUserByEmail(identity.email)) redirect(303, '/login?notice=needs-password');

	const token = await holdPendingOAuth({
		provider: provider.id,
		providerUserId: identity.providerUserId,
		email: identity.email,
		name: identity.name ?? identity.email.split('@')[0]
	});
	cookies.set('oauth_pending', token, {
		path: '/signup/oauth',
		httpOnly: true,
		sameSite: 'lax',
		secure: isSecureContext(url),
		maxAge: 15 * 60
	});
	redirect(303, `/signup/oauth${next ? `?next=${encodeURIComponent(next)}` : ''}`);
};
