// Fake OAuth 2.0 provider (authorization code grant with PKCE S256), so sign-in through
// an outside provider can be exercised without leaving 127.0.0.1.
//
//   GET  /oauth/authorize  → a "Local test sign-in provider" page with a form
//   POST /oauth/authorize  → 303 to redirect_uri?code=…&state=…
//   POST /oauth/token      → { access_token, token_type: 'Bearer', expires_in }
//   GET  /oauth/userinfo   → { sub, email, name, email_verified: true }
//
// Why our own and not oauth2-mock-server (judged against 8.2.3, which stays as an independent
// reference in tests/integration/oauth-reference.test.ts): it is stricter where a sign-in bug
// would hide. oauth2-mock-server accepts an authorize request without `state` and with PKCE
// `plain` or none; checks `code_verifier` only when the token request sends one (a PKCE code
// redeemed without its verifier gets tokens, against RFC 7636 §4.6); redeems any code string,
// any number of times, with no expiry, for any client, secret or redirect_uri; and answers
// userinfo with `{ sub: "johndoe" }` whatever the token. This fake requires `state` and S256,
// always checks the verifier, ties a code to its client and redirect_uri, keeps it single use
// for 60 s (a replay revokes its tokens), checks the client secret and the bearer token, and
// shows a sign-in page, so each e-mail typed there is its own stable account in browser tests.
import { createHash, randomBytes } from 'node:crypto';
import { escapeHtml, readBody, redirect, sendHtml, sendJson } from './http-util.js';

/**
 * @typedef {{
 *   clientId: string,
 *   redirectUri: string,
 *   state: string,
 *   codeChallenge: string,
 *   scope: string
 * }} AuthorizeRequest
 * @typedef {{
 *   request: AuthorizeRequest,
 *   user: FakeUser,
 *   expiresAt: number,
 *   used: boolean,
 *   accessTokens: string[]
 * }} CodeGrant
 * @typedef {{ sub: string, email: string, name: string }} FakeUser
 * @typedef {{ user: FakeUser, expiresAt: number }} AccessToken
 * @typedef {{
 *   clientId: string,
 *   clientSecret: string,
 *   codeTtlMs?: number,
 *   tokenTtlSeconds?: number,
 *   now?: () => number
 * }} OAuthOptions
 */

/** Used codes are remembered this long after expiry, so a replay is told apart from a typo. */
const FORGET_AFTER_MS = 10 * 60 * 1000;

/**
 * The provider's user id: stable per e-mail address, like a real provider's account id.
 * @param {string} email
 */
export function fakeSubject(email) {
	return 'fake-' + createHash('sha256').update(email.trim().toLowerCase()).digest('hex').slice(0, 24);
}

/** @param {string} verifier */
function s256(verifier) {
	return createHash('sha256').update(verifier).digest('base64url');
}

/** @param {string} value */
function isLoopbackHttpUrl(value) {
	try {
		const url = new URL(value);
		return url.protocol === 'http:' && (url.hostname === '127.0.0.1' || url.hostname === 'localhost') && !url.hash;
	} catch {
		return false;
	}
}

/**
 * @param {OAuthOptions} options
 */
export function createOAuthProvider(options) {
	const codeTtlMs = options.codeTtlMs ?? 60_000;
	const tokenTtlSeconds = options.tokenTtlSeconds ?? 3600;
	const now = options.now ?? Date.now;
	/** @type {Map<string, CodeGrant>} */
	const codes = new Map();
	/** @type {Map<string, AccessToken>} */
	const tokens = new Map();

	function forgetOld() {
		const t = now();
		for (const [code, grant] of codes) if (grant.expiresAt + FORGET_AFTER_MS < t) codes.delete(code);
		for (const [token, entry] of tokens) if (entry.expiresAt < t) tokens.delete(token);
	}

	/**
	 * Errors that must not redirect (unknown client, bad redirect_uri) are shown as a page;
	 * the others go back to the client as `?error=…` (RFC 6749 §4.1.2.1).
	 * @param {URLSearchParams} params
	 * @returns {{ ok: true, request: AuthorizeRequest } | { ok: false, page: string } | { ok: false, redirectTo: string }}
	 */
	function checkAuthorizeParams(params) {
		const clientId = params.get('client_id') ?? '';
		const redirectUri = params.get('redirect_uri') ?? '';
		if (clientId !== options.clientId) return { ok: false, page: `Unknown client_id "${clientId}".` };
		if (!isLoopbackHttpUrl(redirectUri)) {
			return { ok: false, page: 'redirect_uri must be an http://127.0.0.1 or http://localhost address.' };
		}
		const state = params.get('state') ?? '';
		/** @param {string} error @param {string} description */
		const back = (error, description) => {
			const url = new URL(redirectUri);
			url.searchParams.set('error', error);
			url.searchParams.set('error_description', description);
			if (state) url.searchParams.set('state', state);
			return { ok: /** @type {const} */ (false), redirectTo: url.href };
		};
		if (params.get('response_type') !== 'code') return back('unsupported_response_type', 'Only response_type=code is supported.');
		if (!state) return back('invalid_request', 'state is required.');
		const codeChallenge = params.get('code_challenge') ?? '';
		if (!codeChallenge || params.get('code_challenge_method') !== 'S256') {
			return back('invalid_request', 'PKCE with code_challenge_method=S256 is required.');
		}
		return {
			ok: true,
			request: { clientId, redirectUri, state, codeChallenge, scope: params.get('scope') ?? '' }
		};
	}

	/**
	 * @param {import('./http-util.js').Response} res
	 * @param {AuthorizeRequest} request
	 * @param {{ email: string, name: string, error?: string }} values
	 */
	function showSignInForm(res, request, values) {
		const hidden = {
			response_type: 'code',
			client_id: request.clientId,
			redirect_uri: request.redirectUri,
			state: request.state,
			code_challenge: request.codeChallenge,
			code_challenge_method: 'S256',
			scope: request.scope
		};
		const hiddenInputs = Object.entries(hidden)
			.map(([k, v]) => `<input type="hidden" name="${k}" value="${escapeHtml(v)}">`)
			.join('\n\t\t');
		const error = values.error ? `<p role="alert" class="error">${escapeHtml(values.error)}</p>` : '';
		sendHtml(
			res,
			values.error ? 400 : 200,
			`<!doctype html>
<html lang="en">
<head>
	<meta charset="utf-8">
	<meta name="viewport" content="width=device-width, initial-scale=1">
	<title>Local test sign-in provider</title>
	<style>
		body { font: 16px/1.5 system-ui, sans-serif; max-width: 28rem; margin: 3rem auto; padding: 0 1rem; }
		label { display: block; margin-top: 1rem; font-weight: 600; }
		input:not([type=hidden]) { width: 100%; padding: .5rem; font: inherit; box-sizing: border-box; }
		.actions { margin-top: 1.5rem; display: flex; gap: .75rem; }
		button { padding: .5rem 1rem; font: inherit; }
		.note { color: #555; font-size: .9rem; }
		.error { color: #b00020; }
	</style>
</head>
<body>
	<main>
	<h1>Local test sign-in provider</h1>
	<p class="note">A stand-in for an outside sign-in service, running only on this machine.
	Any e-mail address is accepted; the same address always gives the same account.</p>
	${error}
	<form method="post" action="/oauth/authorize">
		${hiddenInputs}
		<label for="email">E-mail</label>
		<input id="email" name="email" type="email" autocomplete="email" required value="${escapeHtml(values.email)}">
		<label for="name">Display name</label>
		<input id="name" name="name" type="text" autocomplete="name" value="${escapeHtml(values.name)}">
		<div class="actions">
			<button type="submit" name="decision" value="allow">Continue</button>
			<button type="submit" name="decision" value="deny" formnovalidate>Cancel</button>
		</div>
	</form>
	</main>
</body>
</html>
`
		);
	}

	/**
	 * @param {import('./http-util.js').Response} res
	 * @param {string} message
	 */
	function showError(res, message) {
		sendHtml(
			res,
			400,
			`<!doctype html><html lang="en"><head><meta charset="utf-8"><title>Local test sign-in provider: error</title></head>
<body><h1>Local test sign-in provider</h1><p role="alert">${escapeHtml(message)}</p></body></html>\n`
		);
	}

	/** @type {(req: import('./http-util.js').Request, res: import('./http-util.js').Response, url: URL) => Promise<void>} */
	async function authorize(req, res, url) {
		const params = req.method === 'POST' ? new URLSearchParams(await readBody(req)) : url.searchParams;
		const checked = checkAuthorizeParams(params);
		if (!checked.ok) {
			if ('page' in checked) showError(res, checked.page);
			else redirect(res, checked.redirectTo);
			return;
		}
		const request = checked.request;
		if (req.method !== 'POST') {
			showSignInForm(res, request, { email: params.get('login_hint') || 'tester@example.test', name: 'Test Builder' });
			return;
		}
		if (params.get('decision') === 'deny') {
			const back = new URL(request.redirectUri);
			back.searchParams.set('error', 'access_denied');
			back.searchParams.set('state', request.state);
			redirect(res, back.href);
			return;
		}
		const email = (params.get('email') ?? '').trim();
		const name = (params.get('name') ?? '').trim() || email.split('@')[0] || '';
		if (!/^[^\s@]+@[^\s@]+\.[^\s@]+$/.test(email)) {
			showSignInForm(res, request, { email, name, error: 'Enter an e-mail address such as tester@example.test.' });
			return;
		}
		forgetOld();
		const code = randomBytes(24).toString('base64url');
		codes.set(code, {
			request,
			user: { sub: fakeSubject(email), email: email.toLowerCase(), name },
			expiresAt: now() + codeTtlMs,
			used: false,
			accessTokens: []
		});
		const back = new URL(request.redirectUri);
		back.searchParams.set('code', code);
		back.searchParams.set('state', request.state);
		redirect(res, back.href);
	}

	/**
	 * Client credentials from HTTP Basic (what arctic sends; RFC 6749 says the parts are
	 * form-encoded first, so both spellings are accepted) or from the body.
	 * @param {import('./http-util.js').Request} req
	 * @param {URLSearchParams} body
	 */
	function clientCredentials(req, body) {
		const header = req.headers.authorization ?? '';
		if (/^Basic /i.test(header)) {
			const decoded = Buffer.from(header.slice(6).trim(), 'base64').toString('utf8');
			const colon = decoded.indexOf(':');
			/** @param {string} s */
			const unform = (s) => {
				try {
					return decodeURIComponent(s.replace(/\+/g, ' '));
				} catch {
					return s;
				}
			};
			const id = colon < 0 ? decoded : decoded.slice(0, colon);
			const secret = colon < 0 ? '' : decoded.slice(colon + 1);
			const matches = (id === options.clientId || unform(id) === options.clientId) &&
				(secret === options.clientSecret || unform(secret) === options.clientSecret);
			return { basic: true, id: matches ? options.clientId : id, valid: matches };
		}
		const id = body.get('client_id') ?? '';
		return { basic: false, id, valid: id === options.clientId && body.get('client_secret') === options.clientSecret };
	}

	/** @type {(req: import('./http-util.js').Request, res: import('./http-util.js').Response) => Promise<void>} */
	async function token(req, res) {
		/** @param {number} status @param {string} error @param {string} description @param {Record<string, string>} [headers] */
		const fail = (status, error, description, headers) =>
			sendJson(res, status, { error, error_description: description }, headers);
		if (req.method !== 'POST') return fail(405, 'invalid_request', 'Use POST.', { allow: 'POST' });
		if (!String(req.headers['content-type'] ?? '').startsWith('application/x-www-form-urlencoded')) {
			return fail(400, 'invalid_request', 'Send application/x-www-form-urlencoded.');
		}
		const body = new URLSearchParams(await readBody(req));
		const client = clientCredentials(req, body);
		if (!client.valid) {
			return fail(401, 'invalid_client', 'Unknown client or wrong client secret.', client.basic ? { 'www-authenticate': 'Basic realm="fake-oauth"' } : {});
		}
		const bodyClientId = body.get('client_id');
		if (client.basic && bodyClientId && bodyClientId !== client.id) return fail(400, 'invalid_request', 'client_id differs from the Basic credentials.');
		if (body.get('grant_type') !== 'authorization_code') {
			return fail(400, 'unsupported_grant_type', 'Only grant_type=authorization_code is supported.');
		}
		const code = body.get('code') ?? '';
		const grant = codes.get(code);
		if (!grant) return fail(400, 'invalid_grant', 'Unknown authorization code.');
		if (grant.used) {
			// A replayed code may be stolen: revoke what it gave out (RFC 6749 §4.1.2).
			for (const t of grant.accessTokens) tokens.delete(t);
			return fail(400, 'invalid_grant', 'Authorization code already used.');
		}
		// Single use even when this attempt fails below: a code seen with a wrong
		// verifier or redirect_uri is not trusted again.
		grant.used = true;
		if (grant.expiresAt <= now()) return fail(400, 'invalid_grant', 'Authorization code expired.');
		if (grant.request.clientId !== client.id) return fail(400, 'invalid_grant', 'Code was issued to another client.');
		if (body.get('redirect_uri') !== grant.request.redirectUri) return fail(400, 'invalid_grant', 'redirect_uri does not match.');
		const verifier = body.get('code_verifier') ?? '';
		if (!/^[A-Za-z0-9._~-]{43,128}$/.test(verifier) || s256(verifier) !== grant.request.codeChallenge) {
			return fail(400, 'invalid_grant', 'PKCE verification failed (code_verifier does not match code_challenge).');
		}
		const accessToken = randomBytes(32).toString('base64url');
		tokens.set(accessToken, { user: grant.user, expiresAt: now() + tokenTtlSeconds * 1000 });
		grant.accessTokens.push(accessToken);
		sendJson(res, 200, {
			access_token: accessToken,
			token_type: 'Bearer',
			expires_in: tokenTtlSeconds,
			scope: grant.request.scope
		});
	}

	/** @type {(req: import('./http-util.js').Request, res: import('./http-util.js').Response) => void} */
	function userinfo(req, res) {
		const match = /^Bearer\s+(\S+)$/i.exec(req.headers.authorization ?? '');
		const entry = match ? tokens.get(match[1] ?? '') : undefined;
		if (!entry || entry.expiresAt <= now()) {
			sendJson(res, 401, { error: 'invalid_token' }, { 'www-authenticate': 'Bearer error="invalid_token"' });
			return;
		}
		sendJson(res, 200, { ...entry.user, email_verified: true });
	}

	return {
		/**
		 * Handles /oauth/* requests; returns false for other paths.
		 * @param {import('./http-util.js').Request} req
		 * @param {import('./http-util.js').Response} res
		 * @param {URL} url
		 */
		async handle(req, res, url) {
			switch (url.pathname) {
				case '/oauth/authorize':
					await authorize(req, res, url);
					return true;
				case '/oauth/token':
					await token(req, res);
					return true;
				case '/oauth/userinfo':
					userinfo(req, res);
					return true;
				default:
					return false;
			}
		}
	};
}
