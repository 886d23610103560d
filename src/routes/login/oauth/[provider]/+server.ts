import { error, redirect } from '@sveltejs/kit';
import { providerInfo, startAuthorization } from '$lib/server/auth/oauth';
import { isSecureContext } from '$lib/server/auth/session';
import { safeNext } from '$lib/schemas/auth';
import type { RequestHandler } from './$types';

/** Starts an OAuth sign-in (or, for a signed-in user, the linking of a provider). */
export const GET: RequestHandler = ({ params, url, cookies, locals }) => {
	const provider = providerInfo(params.provider);
	if (!provider) error(404, 'Not found');
	const intent = url.searchParams.get('intent') === 'link' ? 'link' : 'signin';
	if (intent === 'link' && !locals.user) redirect(303, '/login?next=/account');

	const { url: authorizationUrl, state, codeVerifier } = startAuthorization(provider.id, url.origin);
	const options = {
		path: '/login/oauth',
		httpOnly: true,
		sameSite: 'lax' as const,
		secure: isSecureContext(url),
		maxAge: 600
	};
	cookies.set('oauth_state', state, options);
	cookies.set('oauth_verifier', codeVerifier, options);
	cookies.set('oauth_intent', intent, options);
	cookies.set('oauth_next', safeNext(url.searchParams.get('next'), ''), options);
	redirect(302, authorizationUrl.toString());
};
