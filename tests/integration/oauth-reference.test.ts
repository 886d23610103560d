// Our OAuth client flow (arctic, through the start and callback routes) against an independent,
// standard authorization server: oauth2-mock-server. Our own fake (tests/fakes/oauth.js) is
// stricter and serves the browser tests; this file checks that the flow does not depend on
// anything only our fake does — and shows, in the last test, why we keep the fake.
import { OAuth2Client, generateCodeVerifier, generateState, CodeChallengeMethod } from 'arctic';
import { eq } from 'drizzle-orm';
import { OAuth2Server } from 'oauth2-mock-server';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { db } from '$lib/server/db';
import { oauthPending } from '$lib/server/db/schema';
import { providerInfo } from '$lib/server/auth/oauth';
import { rereadServerEnv } from '$lib/server/env';
import { GET as start } from '../../src/routes/login/oauth/[provider]/+server';
import { GET as callback } from '../../src/routes/login/oauth/[provider]/callback/+server';
import { cookieJar, redirectOf } from './oauth-flow';

const origin = 'http://127.0.0.1:3100';
let server: OAuth2Server;
let issuer = '';
const saved: Record<string, string | undefined> = {};
const ours = ['OAUTH_NAME', 'OAUTH_CLIENT_ID', 'OAUTH_CLIENT_SECRET', 'OAUTH_AUTHORIZE_URL', 'OAUTH_TOKEN_URL', 'OAUTH_USERINFO_URL'];

beforeAll(async () => {
	server = new OAuth2Server();
	await server.issuer.keys.generate('RS256');
	await server.start(0, '127.0.0.1');
	issuer = server.issuer.url!;
	for (const name of ours) saved[name] = process.env[name];
	Object.assign(process.env, {
		OAUTH_NAME: 'Reference server',
		OAUTH_CLIENT_ID: 'reference-client',
		OAUTH_CLIENT_SECRET: 'reference-secret',
		OAUTH_AUTHORIZE_URL: `${issuer}/authorize`,
		OAUTH_TOKEN_URL: `${issuer}/token`,
		OAUTH_USERINFO_URL: `${issuer}/userinfo`
	});
	rereadServerEnv();
});

afterAll(async () => {
	for (const name of ours) {
		if (saved[name] === undefined) delete process.env[name];
		else process.env[name] = saved[name];
	}
	rereadServerEnv();
	await server.stop();
});

describe('our client against oauth2-mock-server', () => {
	it('the button names the configured provider, or its host when no name is set', () => {
		expect(providerInfo('oauth')?.name).toBe('Reference server');
		delete process.env.OAUTH_NAME;
		rereadServerEnv();
		expect(providerInfo('oauth')?.name).toBe(new URL(issuer).hostname);
		process.env.OAUTH_NAME = 'Reference server';
		rereadServerEnv();
	});

	it('signs a new identity in: PKCE S256 and state go out, the verifier comes back, userinfo is read', async () => {
		const email = `reference-${crypto.randomUUID().slice(0, 8)}@example.test`;
		const subject = `ref-${crypto.randomUUID()}`;
		let tokenBody: Record<string, string> = {};
		server.service.once('beforeResponse', (_response, req) => {
			tokenBody = (req as unknown as { body: Record<string, string> }).body;
		});
		server.service.once('beforeUserinfo', (response) => {
			response.body = { sub: subject, email, email_verified: true, name: 'Reference Builder' };
		});

		const { jar, cookies } = cookieJar();
		const locals = { user: null };
		const started = await redirectOf(() =>
			start({ params: { provider: 'oauth' }, url: new URL(`${origin}/login/oauth/oauth`), cookies, locals } as never)
		);
		const authorize = new URL(started.location);
		expect(authorize.origin + authorize.pathname).toBe(`${issuer}/authorize`);
		expect(authorize.searchParams.get('code_challenge_method')).toBe('S256');
		expect(authorize.searchParams.get('state')).toBe(jar.get('oauth_state'));

		const answered = await fetch(authorize, { redirect: 'manual' });
		expect(answered.status).toBe(302);
		const back = new URL(answered.headers.get('location')!);
		expect(back.origin + back.pathname).toBe(`${origin}/login/oauth/oauth/callback`);

		const done = await redirectOf(() => callback({ params: { provider: 'oauth' }, url: back, cookies, locals } as never));
		expect(done).toMatchObject({ status: 303, location: '/signup/oauth' });
		// The server checked this verifier against the challenge it was given (RFC 7636 §4.6).
		expect(tokenBody.code_verifier).toMatch(/^[A-Za-z0-9._~-]{43,128}$/);
		expect(tokenBody.redirect_uri).toBe(`${origin}/login/oauth/oauth/callback`);

		const [held] = await db.select().from(oauthPending).where(eq(oauthPending.email, email));
		expect(held).toMatchObject({ provider: 'oauth', providerUserId: subject, name: 'Reference Builder' });
	});

	it('a state that does not match is refused before any token request', async () => {
		let tokenRequests = 0;
		const count = () => void tokenRequests++;
		server.service.on('beforeResponse', count);
		const { cookies } = cookieJar([
			['oauth_state', generateState()],
			['oauth_verifier', generateCodeVerifier()]
		]);
		const back = new URL(`${origin}/login/oauth/oauth/callback?code=anything&state=${generateState()}`);
		const done = await redirectOf(() => callback({ params: { provider: 'oauth' }, url: back, cookies, locals: { user: null } } as never));
		server.service.off('beforeResponse', count);
		expect(done).toMatchObject({ status: 303, location: '/login?notice=oauth-failed' });
		expect(tokenRequests).toBe(0);
	});

	it('why we keep our own fake: the reference server redeems a PKCE code sent without its verifier', async () => {
		// RFC 7636 §4.6 says the server must check the verifier for a code issued with a challenge;
		// oauth2-mock-server 8.2 checks it only when one is sent, and never ties a code to its
		// client or redirect URI. Our fake refuses (here a missing verifier; tests/integration/fakes.test.ts
		// shows a wrong one, a reused or expired code, a wrong secret or redirect URI).
		const client = new OAuth2Client('reference-client', 'reference-secret', `${origin}/cb`);
		const url = client.createAuthorizationURLWithPKCE(`${issuer}/authorize`, generateState(), CodeChallengeMethod.S256, generateCodeVerifier(), []);
		const code = new URL((await fetch(url, { redirect: 'manual' })).headers.get('location')!).searchParams.get('code')!;
		const response = await fetch(`${issuer}/token`, {
			method: 'POST',
			headers: { 'content-type': 'application/x-www-form-urlencoded' },
			body: new URLSearchParams({ grant_type: 'authorization_code', code, redirect_uri: 'http://elsewhere.invalid/cb' })
		});
		expect(response.status).toBe(200);

		// The same request to our fake (started by global-setup.ts): refused.
		const fakes = process.env.FAKES_URL!;
		const ourClient = new OAuth2Client('cellsitter-local', 'cellsitter-local-secret', `${origin}/cb`);
		const ourUrl = ourClient.createAuthorizationURLWithPKCE(`${fakes}/oauth/authorize`, generateState(), CodeChallengeMethod.S256, generateCodeVerifier(), []);
		const form = new URLSearchParams(ourUrl.searchParams);
		form.set('email', 'strict@example.test');
		form.set('decision', 'allow');
		const signedIn = await fetch(`${fakes}/oauth/authorize`, { method: 'POST', body: form, redirect: 'manual' });
		const ourCode = new URL(signedIn.headers.get('location')!).searchParams.get('code')!;
		const refused = await fetch(`${fakes}/oauth/token`, {
			method: 'POST',
			headers: {
				'content-type': 'application/x-www-form-urlencoded',
				authorization: `Basic ${Buffer.from('cellsitter-local:cellsitter-local-secret').toString('base64')}`
			},
			body: new URLSearchParams({ grant_type: 'authorization_code', code: ourCode, redirect_uri: `${origin}/cb` })
		});
		expect(refused.status).toBe(400);
		expect((await refused.json()).error).toBe('invalid_grant');
	});
});
