// The local fakes (tests/fakes/server.js) are what the app and the browser tests lean on
// for mail and outside sign-in, so they get tests of their own. No database needed.
import {
	CodeChallengeMethod,
	OAuth2Client,
	OAuth2RequestError,
	generateCodeVerifier,
	generateState
} from 'arctic';
import nodemailer from 'nodemailer';
import { afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import { startFakes, type RunningFakes } from '../fakes/server.js';

const CLIENT_ID = 'cellsitter-local';
const CLIENT_SECRET = 'cellsitter-local-secret';
const REDIRECT_URI = 'http://127.0.0.1:3999/auth/oauth/callback';

interface MessageJson {
	id: string;
	from: string;
	to: string[];
	subject: string;
	text: string;
	html: string;
	receivedAt: string;
}

let fakes: RunningFakes;
/** A clock the tests can move, to expire authorization codes without waiting. */
let clockOffsetMs = 0;

beforeAll(async () => {
	// Port 0: free ports, so this never collides with fakes started by scripts/test.sh.
	fakes = await startFakes({ smtpPort: 0, httpPort: 0, now: () => Date.now() + clockOffsetMs });
});

afterAll(async () => {
	await fakes?.close();
});

beforeEach(() => {
	clockOffsetMs = 0;
});

async function messages(query = ''): Promise<MessageJson[]> {
	const response = await fetch(`${fakes.httpUrl}/messages${query}`);
	expect(response.status).toBe(200);
	return response.json();
}

describe('fake SMTP and the mailbox API', () => {
	it('answers /health', async () => {
		const response = await fetch(`${fakes.httpUrl}/health`);
		expect(response.status).toBe(200);
	});

	it('keeps a multipart message with decoded subject, text and html', async () => {
		await fetch(`${fakes.httpUrl}/messages`, { method: 'DELETE' });
		const transport = nodemailer.createTransport({ host: '127.0.0.1', port: fakes.smtpPort, secure: false });
		const link = 'http://127.0.0.1:3000/invitations/' + 'x'.repeat(90) + '?a=1&b=2';
		await transport.sendMail({
			from: 'Cellsitter <no-reply@cellsitter.test>',
			to: 'Åsa Builder <Asa@Example.test>',
			subject: 'Invitation to Larkfield Packs — 18650 ⚡ workshop',
			text: `Hello Åsa,\nopen ${link} to join.\nCharge = 4.20 V`,
			html: `<p>Hello Åsa, <a href="${link}">join Larkfield</a> (4.20&nbsp;V)</p>`
		});
		await transport.sendMail({
			from: 'no-reply@cellsitter.test',
			to: 'someone-else@example.test',
			subject: 'Plain one',
			text: 'Only text'
		});
		transport.close();

		const all = await messages();
		expect(all.map((m) => m.subject)).toEqual(['Plain one', 'Invitation to Larkfield Packs — 18650 ⚡ workshop']);

		const mine = await messages('?to=asa@example.test');
		expect(mine).toHaveLength(1);
		const [mail] = mine;
		expect(mail.from).toBe('Cellsitter <no-reply@cellsitter.test>');
		expect(mail.to.map((a) => a.toLowerCase())).toEqual(['asa@example.test']);
		expect(mail.text).toBe(`Hello Åsa,\nopen ${link} to join.\nCharge = 4.20 V`);
		expect(mail.html).toBe(`<p>Hello Åsa, <a href="${link}">join Larkfield</a> (4.20&nbsp;V)</p>`);
		expect(Date.parse(mail.receivedAt)).not.toBeNaN();

		const one = await fetch(`${fakes.httpUrl}/messages/${mail.id}`);
		expect((await one.json()).subject).toBe(mail.subject);
		expect(all[0].html).toBe('');

		expect((await fetch(`${fakes.httpUrl}/messages`, { method: 'DELETE' })).status).toBe(200);
		expect(await messages()).toEqual([]);
	});
	it('keeps Bcc recipients in the envelope only, and lists attachments without their content', async () => {
		const transport = nodemailer.createTransport({ host: '127.0.0.1', port: fakes.smtpPort, secure: false });
		const pdf = Buffer.from('%PDF-1.4\n% datasheet stand-in\n');
		await transport.sendMail({
			from: 'no-reply@cellsitter.test',
			to: 'Builder <builder@example.test>',
			bcc: 'watcher@example.test',
			subject: 'Datasheet attached',
			text: 'See the attached datasheet.',
			attachments: [{ filename: 'cell-datasheet.pdf', content: pdf, contentType: 'application/pdf' }]
		});
		transport.close();

		const [mail] = (await messages('?to=watcher@example.test')) as (MessageJson & {
			headerTo: string[];
			attachments: { filename: string; contentType: string; size: number }[];
		})[];
		expect(mail.subject).toBe('Datasheet attached');
		expect(mail.to.map((a) => a.toLowerCase()).sort()).toEqual(['builder@example.test', 'watcher@example.test']);
		expect(mail.headerTo).toEqual(['Builder <builder@example.test>']);
		expect(mail.attachments).toEqual([{ filename: 'cell-datasheet.pdf', contentType: 'application/pdf', size: pdf.length }]);
	});
});

describe('fake OAuth 2.0 provider', () => {
	const authorizeEndpoint = () => `${fakes.httpUrl}/oauth/authorize`;
	const tokenEndpoint = () => `${fakes.httpUrl}/oauth/token`;

	/** The browser's part: open the sign-in page, submit its form, read the redirect. */
	async function signInAtProvider(authorizationUrl: URL, email: string, name = 'Test Builder') {
		const page = await fetch(authorizationUrl);
		expect(page.status).toBe(200);
		const html = await page.text();
		expect(html).toContain('Local test sign-in provider');
		expect(html).toMatch(/<label for="email">E-mail<\/label>/);
		expect(html).toMatch(/<label for="name">Display name<\/label>/);
		expect(html).toContain('>Continue</button>');

		const form = new URLSearchParams();
		for (const [, field, value] of html.matchAll(/<input type="hidden" name="([^"]+)" value="([^"]*)">/g)) {
			form.set(field, value.replace(/&amp;/g, '&').replace(/&quot;/g, '"').replace(/&#39;/g, "'").replace(/&lt;/g, '<').replace(/&gt;/g, '>'));
		}
		form.set('email', email);
		form.set('name', name);
		form.set('decision', 'allow');
		const posted = await fetch(authorizeEndpoint(), {
			method: 'POST',
			body: form,
			redirect: 'manual'
		});
		expect(posted.status).toBe(303);
		const location = new URL(posted.headers.get('location') ?? '');
		expect(location.origin + location.pathname).toBe(REDIRECT_URI);
		return { code: location.searchParams.get('code') ?? '', state: location.searchParams.get('state') };
	}

	function startFlow() {
		const client = new OAuth2Client(CLIENT_ID, CLIENT_SECRET, REDIRECT_URI);
		const state = generateState();
		const codeVerifier = generateCodeVerifier();
		const url = client.createAuthorizationURLWithPKCE(authorizeEndpoint(), state, CodeChallengeMethod.S256, codeVerifier, [
			'openid',
			'email',
			'profile'
		]);
		return { client, state, codeVerifier, url };
	}

	async function userinfo(accessToken: string) {
		return fetch(`${fakes.httpUrl}/oauth/userinfo`, { headers: { authorization: `Bearer ${accessToken}` } });
	}

	async function expectOAuthError(promise: Promise<unknown>, code: string) {
		const error = await promise.then(
			() => null,
			(e: unknown) => e
		);
		expect(error).toBeInstanceOf(OAuth2RequestError);
		expect((error as OAuth2RequestError).code).toBe(code);
	}

	it('runs authorize → code → token → userinfo with state and PKCE', async () => {
		const { client, state, codeVerifier, url } = startFlow();
		const { code, state: returnedState } = await signInAtProvider(url, 'Builder.One@Example.test', 'Builder One');
		expect(returnedState).toBe(state);
		expect(code).not.toBe('');

		const tokens = await client.validateAuthorizationCode(tokenEndpoint(), code, codeVerifier);
		expect(tokens.tokenType()).toBe('Bearer');
		expect(tokens.accessTokenExpiresInSeconds()).toBe(3600);

		const response = await userinfo(tokens.accessToken());
		expect(response.status).toBe(200);
		const user = await response.json();
		expect(user).toMatchObject({ email: 'builder.one@example.test', name: 'Builder One', email_verified: true });
		expect(user.sub).toMatch(/^fake-[0-9a-f]+$/);

		// The same e-mail is the same provider account; another e-mail is another.
		const again = startFlow();
		const second = await signInAtProvider(again.url, 'builder.one@example.test');
		const secondTokens = await again.client.validateAuthorizationCode(tokenEndpoint(), second.code, again.codeVerifier);
		expect((await (await userinfo(secondTokens.accessToken())).json()).sub).toBe(user.sub);

		const other = startFlow();
		const third = await signInAtProvider(other.url, 'someone.else@example.test');
		const thirdTokens = await other.client.validateAuthorizationCode(tokenEndpoint(), third.code, other.codeVerifier);
		expect((await (await userinfo(thirdTokens.accessToken())).json()).sub).not.toBe(user.sub);
	});

	it('rejects a wrong code_verifier', async () => {
		const { client, url } = startFlow();
		const { code } = await signInAtProvider(url, 'pkce@example.test');
		await expectOAuthError(client.validateAuthorizationCode(tokenEndpoint(), code, generateCodeVerifier()), 'invalid_grant');
	});

	it('rejects a code used twice, and revokes the token the code gave', async () => {
		const { client, codeVerifier, url } = startFlow();
		const { code } = await signInAtProvider(url, 'twice@example.test');
		const tokens = await client.validateAuthorizationCode(tokenEndpoint(), code, codeVerifier);
		expect((await userinfo(tokens.accessToken())).status).toBe(200);

		await expectOAuthError(client.validateAuthorizationCode(tokenEndpoint(), code, codeVerifier), 'invalid_grant');
		expect((await userinfo(tokens.accessToken())).status).toBe(401);
	});

	it('rejects an expired code (60 s)', async () => {
		const { client, codeVerifier, url } = startFlow();
		const { code } = await signInAtProvider(url, 'slow@example.test');
		clockOffsetMs = 61_000;
		await expectOAuthError(client.validateAuthorizationCode(tokenEndpoint(), code, codeVerifier), 'invalid_grant');
	});

	it('rejects a wrong client secret and a different redirect_uri', async () => {
		const { codeVerifier, url } = startFlow();
		const { code } = await signInAtProvider(url, 'client@example.test');
		const impostor = new OAuth2Client(CLIENT_ID, 'not-the-secret', REDIRECT_URI);
		await expectOAuthError(impostor.validateAuthorizationCode(tokenEndpoint(), code, codeVerifier), 'invalid_client');

		const flow = startFlow();
		const second = await signInAtProvider(flow.url, 'client@example.test');
		const elsewhere = new OAuth2Client(CLIENT_ID, CLIENT_SECRET, 'http://127.0.0.1:3999/elsewhere');
		await expectOAuthError(elsewhere.validateAuthorizationCode(tokenEndpoint(), second.code, flow.codeVerifier), 'invalid_grant');
	});

	it('refuses unknown clients, non-loopback redirect URIs and a missing PKCE challenge', async () => {
		const unknownClient = new OAuth2Client('someone-else', CLIENT_SECRET, REDIRECT_URI).createAuthorizationURLWithPKCE(
			authorizeEndpoint(),
			generateState(),
			CodeChallengeMethod.S256,
			generateCodeVerifier(),
			[]
		);
		expect((await fetch(unknownClient, { redirect: 'manual' })).status).toBe(400);

		for (const redirectUri of ['https://evil.example/cb', 'http://127.0.0.1.evil.example/cb']) {
			const url = new OAuth2Client(CLIENT_ID, CLIENT_SECRET, redirectUri).createAuthorizationURLWithPKCE(
				authorizeEndpoint(),
				generateState(),
				CodeChallengeMethod.S256,
				generateCodeVerifier(),
				[]
			);
			const response = await fetch(url, { redirect: 'manual' });
			expect(response.status).toBe(400);
			expect(response.headers.get('location')).toBeNull();
		}

		const state = generateState();
		const noPkce = new OAuth2Client(CLIENT_ID, CLIENT_SECRET, REDIRECT_URI).createAuthorizationURL(authorizeEndpoint(), state, []);
		const response = await fetch(noPkce, { redirect: 'manual' });
		expect(response.status).toBe(303);
		const back = new URL(response.headers.get('location') ?? '');
		expect(back.searchParams.get('error')).toBe('invalid_request');
		expect(back.searchParams.get('state')).toBe(state);
	});

	it('answers userinfo without a valid bearer token with 401', async () => {
		expect((await fetch(`${fakes.httpUrl}/oauth/userinfo`)).status).toBe(401);
		expect((await userinfo('made-up-token')).status).toBe(401);
	});
});
