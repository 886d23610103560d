// What a provider answers after the code exchange is checked before anything is linked or held:
// a bad answer is a sign-in error, never an identity "undefined". GitHub's API and a generic
// userinfo endpoint are stood in for by a local HTTP server that answers as told (a fake of a
// hosted service); the full callback runs against the local fake provider for the token step.
import http from 'node:http';
import type { AddressInfo } from 'node:net';
import { eq } from 'drizzle-orm';
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { OAuthFailed, readGitHubIdentity, readUserInfo } from '$lib/server/auth/oauth';
import { db } from '$lib/server/db';
import { oauthAccounts, oauthPending } from '$lib/server/db/schema';
import { rereadServerEnv } from '$lib/server/env';
import { GET as start } from '../../src/routes/login/oauth/[provider]/+server';
import { GET as callback } from '../../src/routes/login/oauth/[provider]/callback/+server';
import { fakeSubject } from '../fakes/oauth.js';
import { signUpOwner } from './helpers';
import { cookieJar, redirectOf } from './oauth-flow';

type Answer = { status: number; body: unknown; type?: string };
/** Path → answer; a function answers from the request (to pass through to the fake provider). */
let answers: Record<string, Answer | ((req: http.IncomingMessage) => Promise<Answer>)> = {};
let server: http.Server;
let base = '';

beforeAll(async () => {
	server = http.createServer(async (req, res) => {
		const found = answers[new URL(req.url ?? '/', 'http://x').pathname];
		const answer = typeof found === 'function' ? await found(req) : (found ?? { status: 404, body: { message: 'Not Found' } });
		const text = typeof answer.body === 'string' ? answer.body : JSON.stringify(answer.body);
		res.writeHead(answer.status, { 'content-type': answer.type ?? 'application/json' }).end(text);
	});
	await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
	base = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
});

afterAll(async () => {
	await new Promise((resolve) => server.close(resolve));
});

afterEach(() => {
	answers = {};
});

async function failure(promise: Promise<unknown>): Promise<OAuthFailed> {
	const error = await promise.then(
		() => null,
		(e: unknown) => e
	);
	expect(error).toBeInstanceOf(OAuthFailed);
	return error as OAuthFailed;
}

// Shapes from GitHub's REST docs: "Get the authenticated user" (id is an integer) and
// "List email addresses for the authenticated user" (email, primary, verified, visibility).
const githubUser = { login: 'octo-builder', id: 583231, name: 'Octo Builder' };
const githubEmails = [
	{ email: 'old@example.test', primary: false, verified: true, visibility: null },
	{ email: 'Octo.Builder@Example.test', primary: true, verified: true, visibility: 'private' }
];

describe('GitHub API answers', () => {
	it('a good answer gives the numeric id as text and the verified primary e-mail', async () => {
		answers = { '/user': { status: 200, body: githubUser }, '/user/emails': { status: 200, body: githubEmails } };
		expect(await readGitHubIdentity('token', base)).toEqual({
			providerUserId: '583231',
			email: 'octo.builder@example.test',
			name: 'Octo Builder'
		});
	});

	it.each<[string, Record<string, Answer>]>([
		['401 Bad credentials', { '/user': { status: 401, body: { message: 'Bad credentials' } }, '/user/emails': { status: 200, body: githubEmails } }],
		['a 200 without an id', { '/user': { status: 200, body: { login: 'x' } }, '/user/emails': { status: 200, body: githubEmails } }],
		['an id as text', { '/user': { status: 200, body: { ...githubUser, id: '583231' } }, '/user/emails': { status: 200, body: githubEmails } }],
		['a fractional id', { '/user': { status: 200, body: { ...githubUser, id: 1.5 } }, '/user/emails': { status: 200, body: githubEmails } }],
		['an HTML page', { '/user': { status: 200, body: '<html>rate limited</html>', type: 'text/html' }, '/user/emails': { status: 200, body: githubEmails } }],
		['e-mails refused (403)', { '/user': { status: 200, body: githubUser }, '/user/emails': { status: 403, body: { message: 'Resource not accessible' } } }],
		['e-mails not a list', { '/user': { status: 200, body: githubUser }, '/user/emails': { status: 200, body: { message: 'odd' } } }]
	])('%s is a failed sign-in', async (_, given) => {
		answers = given;
		expect((await failure(readGitHubIdentity('token', base))).reason).toBe('failed');
	});

	it.each([
		['no e-mail at all', []],
		['a primary e-mail not verified', [{ email: 'p@example.test', primary: true, verified: false, visibility: null }]],
		['only a verified secondary e-mail', [{ email: 's@example.test', primary: false, verified: true, visibility: null }]]
	])('%s: refused for want of a verified e-mail', async (_, emails) => {
		answers = { '/user': { status: 200, body: githubUser }, '/user/emails': { status: 200, body: emails } };
		expect((await failure(readGitHubIdentity('token', base))).reason).toBe('no-email');
	});
});

describe('generic userinfo answers', () => {
	it.each<[string, Answer]>([
		['a 500', { status: 500, body: { error: 'server_error' } }],
		['an empty object', { status: 200, body: {} }],
		['a numeric subject', { status: 200, body: { sub: 42, email: 'a@example.test' } }],
		['an empty subject', { status: 200, body: { sub: '', email: 'a@example.test' } }],
		['a subject with NUL', { status: 200, body: { sub: 'abc\u0000', email: 'a@example.test' } }],
		['not JSON', { status: 200, body: 'sub=abc', type: 'text/plain' }]
	])('%s is a failed sign-in', async (_, answer) => {
		answers = { '/userinfo': answer };
		expect((await failure(readUserInfo(`${base}/userinfo`, 'token'))).reason).toBe('failed');
	});

	it('keeps a verified e-mail, drops an unverified or malformed one, cleans the name', async () => {
		answers = { '/userinfo': { status: 200, body: { sub: 's-1', email: 'A@Example.test', name: 'Ada\u0000 Bench' } } };
		expect(await readUserInfo(`${base}/userinfo`, 'token')).toEqual({ providerUserId: 's-1', email: 'a@example.test', name: 'Ada Bench' });
		answers = { '/userinfo': { status: 200, body: { sub: 's-2', email: 'b@example.test', email_verified: false } } };
		expect((await readUserInfo(`${base}/userinfo`, 'token')).email).toBeNull();
		answers = { '/userinfo': { status: 200, body: { sub: 's-3', email: 'not an address' } } };
		expect((await readUserInfo(`${base}/userinfo`, 'token')).email).toBeNull();
	});
});

describe('the OAuth callback with a bad userinfo answer', () => {
	const origin = 'http://127.0.0.1:3100';

	/** Start → the fake provider's sign-in form → back to the callback, as a browser would. */
	async function signInThroughFake(email: string, signedIn: { id: string } | null = null) {
		const intent = signedIn ? 'link' : 'signin';
		const locals = { user: signedIn };
		const { cookies } = cookieJar();
		const started = await redirectOf(() =>
			start({ params: { provider: 'oauth' }, url: new URL(`${origin}/login/oauth/oauth?intent=${intent}`), cookies, locals } as never)
		);
		const authorize = new URL(started.location);
		const form = new URLSearchParams(authorize.searchParams);
		form.set('email', email);
		form.set('name', 'Bad Answer');
		form.set('decision', 'allow');
		const back = await fetch(`${authorize.origin}${authorize.pathname}`, { method: 'POST', body: form, redirect: 'manual' });
		const returned = new URL(back.headers.get('location') ?? '');
		return redirectOf(() =>
			callback({ params: { provider: 'oauth' }, url: returned, cookies, locals } as never)
		);
	}

	async function withUserInfoAt(url: string, run: () => Promise<void>) {
		const before = process.env.OAUTH_USERINFO_URL;
		process.env.OAUTH_USERINFO_URL = url;
		rereadServerEnv();
		try {
			await run();
		} finally {
			if (before === undefined) delete process.env.OAUTH_USERINFO_URL;
			else process.env.OAUTH_USERINFO_URL = before;
			rereadServerEnv();
		}
	}

	it.each<[string, Answer]>([
		['401', { status: 401, body: { error: 'invalid_token' } }],
		['no subject', { status: 200, body: { email: 'x@example.test', email_verified: true } }]
	])('%s: back to sign-in with a plain notice, nothing held or linked', async (_, answer) => {
		const email = `bad-answer-${crypto.randomUUID().slice(0, 8)}@example.test`;
		answers = { '/userinfo': answer };
		await withUserInfoAt(`${base}/userinfo`, async () => {
			expect(await signInThroughFake(email)).toMatchObject({ status: 303, location: '/login?notice=oauth-failed' });
		});
		expect(await db.select().from(oauthPending).where(eq(oauthPending.email, email))).toEqual([]);
		expect(await db.select().from(oauthAccounts).where(eq(oauthAccounts.providerUserId, fakeSubject(email)))).toEqual([]);
		expect(await db.select().from(oauthPending).where(eq(oauthPending.providerUserId, 'undefined'))).toEqual([]);
	});

	it('linking from the account page with a bad answer goes back there with a plain problem', async () => {
		const owner = await signUpOwner('link-bad');
		answers = { '/userinfo': { status: 502, body: 'Bad Gateway', type: 'text/plain' } };
		await withUserInfoAt(`${base}/userinfo`, async () => {
			expect(await signInThroughFake(owner.email, { id: owner.userId })).toMatchObject({
				status: 303,
				location: '/account?link-error=oauth-failed'
			});
		});
		expect(await db.select().from(oauthAccounts).where(eq(oauthAccounts.userId, owner.userId))).toEqual([]);
	});

	it('the same flow with a good answer goes on to choose a workshop', async () => {
		const email = `good-answer-${crypto.randomUUID().slice(0, 8)}@example.test`;
		expect(await signInThroughFake(email)).toMatchObject({ status: 303, location: '/signup/oauth' });
		const [held] = await db.select().from(oauthPending).where(eq(oauthPending.email, email));
		expect(held.providerUserId).toBe(fakeSubject(email));
	});
});
