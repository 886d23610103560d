/**
 * OAuth sign-in through arctic: GitHub when configured, and one generic OAuth 2.0 provider whose
 * endpoints come from the environment (the local fake when CELLSITTER_FAKES=1).
 */
import { CodeChallengeMethod, GitHub, OAuth2Client, generateCodeVerifier, generateState } from 'arctic';
import { serverEnv } from '../env';

export type ProviderId = 'github' | 'oauth';
export type ProviderInfo = { id: ProviderId; name: string };
export type Identity = { providerUserId: string; email: string | null; name: string | null };

export function configuredProviders(): ProviderInfo[] {
	const env = serverEnv();
	const list: ProviderInfo[] = [];
	if (env.OAUTH_CLIENT_ID && env.OAUTH_AUTHORIZE_URL && env.OAUTH_TOKEN_URL && env.OAUTH_USERINFO_URL) {
		list.push({ id: 'oauth', name: env.OAUTH_NAME });
	}
	if (env.GITHUB_CLIENT_ID && env.GITHUB_CLIENT_SECRET) list.push({ id: 'github', name: 'GitHub' });
	return list;
}

export function providerInfo(id: string): ProviderInfo | null {
	return configuredProviders().find((p) => p.id === id) ?? null;
}

const callbackUrl = (origin: string, id: ProviderId) => `${origin}/login/oauth/${id}/callback`;

/** The provider's authorization URL, with the state and PKCE verifier to keep in cookies. */
export function startAuthorization(id: ProviderId, origin: string) {
	const env = serverEnv();
	const state = generateState();
	const codeVerifier = generateCodeVerifier();
	if (id === 'github') {
		const github = new GitHub(env.GITHUB_CLIENT_ID!, env.GITHUB_CLIENT_SECRET!, callbackUrl(origin, id));
		return { url: github.createAuthorizationURL(state, ['read:user', 'user:email']), state, codeVerifier };
	}
	const client = new OAuth2Client(env.OAUTH_CLIENT_ID!, env.OAUTH_CLIENT_SECRET ?? null, callbackUrl(origin, id));
	const url = client.createAuthorizationURLWithPKCE(
		env.OAUTH_AUTHORIZE_URL!,
		state,
		CodeChallengeMethod.S256,
		codeVerifier,
		['openid', 'email', 'profile']
	);
	return { url, state, codeVerifier };
}

/** Exchanges the code and reads who signed in. Throws when the provider refuses. */
export async function finishAuthorization(
	id: ProviderId,
	origin: string,
	code: string,
	codeVerifier: string
): Promise<Identity> {
	const env = serverEnv();
	if (id === 'github') {
		const github = new GitHub(env.GITHUB_CLIENT_ID!, env.GITHUB_CLIENT_SECRET!, callbackUrl(origin, id));
		const tokens = await github.validateAuthorizationCode(code);
		const headers = { Authorization: `Bearer ${tokens.accessToken()}`, 'User-Agent': 'Cellsitter' };
		const user = (await (await fetch('https://api.github.com/user', { headers })).json()) as {
			id: number;
			login: string;
			name: string | null;
		};
		const emails = (await (await fetch('https://api.github.com/user/emails', { headers })).json()) as {
			email: string;
			primary: boolean;
			verified: boolean;
		}[];
		const primary = Array.isArray(emails) ? emails.find((e) => e.primary && e.verified) : undefined;
		return { providerUserId: String(user.id), email: primary?.email ?? null, name: user.name ?? user.login };
	}
	const client = new OAuth2Client(env.OAUTH_CLIENT_ID!, env.OAUTH_CLIENT_SECRET ?? null, callbackUrl(origin, id));
	const tokens = await client.validateAuthorizationCode(env.OAUTH_TOKEN_URL!, code, codeVerifier);
	const response = await fetch(env.OAUTH_USERINFO_URL!, {
		headers: { Authorization: `Bearer ${tokens.accessToken()}` }
	});
	if (!response.ok) throw new Error(`userinfo answered ${response.status}`);
	const info = (await response.json()) as { sub?: string; email?: string; email_verified?: boolean; name?: string };
	if (!info.sub) throw new Error('userinfo has no subject');
	return {
		providerUserId: info.sub,
		email: info.email && info.email_verified !== false ? info.email.toLowerCase() : null,
		name: info.name ?? null
	};
}
