/**
 * OAuth sign-in through arctic: GitHub when configured, and one generic OAuth 2.0 provider whose
 * endpoints come from the environment (the local fake when CELLSITTER_FAKES=1).
 */
import { CodeChallengeMethod, GitHub, OAuth2Client, generateCodeVerifier, generateState } from 'arctic';
import { z } from 'zod';
import { serverEnv } from '../env';

export type ProviderId = 'github' | 'oauth';
export type ProviderInfo = { id: ProviderId; name: string };
export type Identity = { providerUserId: string; email: string | null; name: string | null };

/**
 * A sign-in the provider did not complete: `failed` (refused, unreachable, or an answer of the
 * wrong shape) or `no-email` (GitHub shared no verified primary e-mail). Shown as a notice.
 */
export class OAuthFailed extends Error {
	constructor(
		readonly reason: 'failed' | 'no-email',
		detail: string
	) {
		super(detail);
	}
}

export function configuredProviders(): ProviderInfo[] {
	const env = serverEnv();
	const list: ProviderInfo[] = [];
	if (env.OAUTH_CLIENT_ID && env.OAUTH_AUTHORIZE_URL && env.OAUTH_TOKEN_URL && env.OAUTH_USERINFO_URL) {
		// Without OAUTH_NAME the button names the provider's host rather than a made-up label.
		list.push({ id: 'oauth', name: env.OAUTH_NAME || new URL(env.OAUTH_AUTHORIZE_URL).hostname });
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

/** Exchanges the code and reads who signed in. Throws OAuthFailed (or arctic's errors) when the provider refuses. */
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
		return readGitHubIdentity(tokens.accessToken());
	}
	const client = new OAuth2Client(env.OAUTH_CLIENT_ID!, env.OAUTH_CLIENT_SECRET ?? null, callbackUrl(origin, id));
	const tokens = await client.validateAuthorizationCode(env.OAUTH_TOKEN_URL!, code, codeVerifier);
	return readUserInfo(env.OAUTH_USERINFO_URL!, tokens.accessToken());
}

const GITHUB_API = 'https://api.github.com';
/** A provider that does not answer within this is treated as a refusal (ms). */
const ANSWER_TIMEOUT_MS = 10_000;

/** C0/C1 controls: PostgreSQL refuses NUL in text, and none belongs in an id, address or name. */
const CONTROL = /[\u0000-\u001f\u007f-\u009f]/;
const CONTROLS = /[\u0000-\u001f\u007f-\u009f]/g;
const address = z.string().trim().max(254).pipe(z.email());

// GitHub REST API: "Get the authenticated user" (id is an integer) and "List email addresses for
// the authenticated user" (each with primary and verified flags).
const githubUserAnswer = z.object({
	id: z.number().int().positive().max(Number.MAX_SAFE_INTEGER),
	login: z.string().min(1).max(100),
	name: z.string().nullish()
});
const githubEmailsAnswer = z.array(z.object({ email: z.string(), primary: z.boolean(), verified: z.boolean() }));

// OpenID Connect Core 1.0 §5.3.2: `sub` is a string of at most 255 ASCII characters.
const userInfoAnswer = z.object({
	sub: z.string().min(1).max(255).refine((v) => !CONTROL.test(v)),
	email: z.string().nullish(),
	email_verified: z.union([z.boolean(), z.enum(['true', 'false'])]).optional(),
	name: z.string().nullish()
});

async function getJson(url: string, headers: Record<string, string>): Promise<unknown> {
	let response: Response;
	try {
		response = await fetch(url, { headers, signal: AbortSignal.timeout(ANSWER_TIMEOUT_MS) });
	} catch (e) {
		throw new OAuthFailed('failed', `${url} did not answer: ${e instanceof Error ? e.message : e}`);
	}
	if (!response.ok) throw new OAuthFailed('failed', `${url} answered ${response.status}`);
	try {
		return await response.json();
	} catch {
		throw new OAuthFailed('failed', `${url} did not answer JSON`);
	}
}

function parsed<T>(schema: z.ZodType<T>, value: unknown, what: string): T {
	const result = schema.safeParse(value);
	if (!result.success) throw new OAuthFailed('failed', `${what} has an unexpected shape: ${result.error.issues[0]?.message}`);
	return result.data;
}

/** A display name fit to prefill a form: no control characters, at most 100 characters. */
function cleanName(name: string | null | undefined): string | null {
	const clean = (name ?? '').replace(CONTROLS, '').trim().slice(0, 100);
	return clean || null;
}

/** Who signed in with GitHub: numeric id, and the primary e-mail GitHub has verified (required). */
export async function readGitHubIdentity(accessToken: string, apiBase = GITHUB_API): Promise<Identity> {
	const headers = {
		Authorization: `Bearer ${accessToken}`,
		Accept: 'application/vnd.github+json',
		'User-Agent': 'Cellsitter'
	};
	const [userJson, emailsJson] = await Promise.all([
		getJson(`${apiBase}/user`, headers),
		getJson(`${apiBase}/user/emails`, headers)
	]);
	const user = parsed(githubUserAnswer, userJson, 'GitHub /user');
	const emails = parsed(githubEmailsAnswer, emailsJson, 'GitHub /user/emails');
	const primary = emails.find((e) => e.primary && e.verified);
	const email = primary ? address.safeParse(primary.email) : null;
	if (!email?.success) throw new OAuthFailed('no-email', 'GitHub shared no verified primary e-mail');
	return { providerUserId: String(user.id), email: email.data.toLowerCase(), name: cleanName(user.name) ?? user.login };
}

/** Who signed in with the generic provider, from its userinfo endpoint (OpenID Connect claims). */
export async function readUserInfo(userInfoUrl: string, accessToken: string): Promise<Identity> {
	const info = parsed(userInfoAnswer, await getJson(userInfoUrl, { Authorization: `Bearer ${accessToken}` }), 'userinfo');
	const verified = info.email_verified !== false && info.email_verified !== 'false';
	const email = info.email && verified ? address.safeParse(info.email) : null;
	return {
		providerUserId: info.sub,
		email: email?.success ? email.data.toLowerCase() : null,
		name: cleanName(info.name)
	};
}
